import { describe, expect, it } from 'vitest';
import { cropHost, partitionByHost } from '../../src/shard/partition.ts';

/** Crops on a host, each needing `pieces` distinct requests. */
function crops(host: string, count: number, pieces = 1) {
  return Array.from({ length: count }, (_, i) => ({ key: `${host}-${String(i).padStart(4, '0')}`, stitch: { pieces: Array.from({ length: pieces }, (_, p) => ({ url: `https://${host}/iiif/img${i}/${p}/full/max/0/default.jpg` })) } }));
}

describe('partition by image server host (pure)', () => {
  const all = [...crops('a.example.org', 120), ...crops('b.example.org', 80), ...crops('c.example.org:8443', 60), ...crops('d.example.org', 40), ...crops('e.example.org', 25)];
  it('gives every host to exactly one shard, and every crop once', () => {
    const shards = partitionByHost(all as never, 3);
    const hosts = shards.flatMap((s) => s.hosts);
    expect(hosts.sort()).toEqual(['a.example.org', 'b.example.org', 'c.example.org:8443', 'd.example.org', 'e.example.org']);
    // A shard's crops are those on its hosts: each crop's host is in exactly one shard, and the counts add up.
    for (const c of all) expect(shards.filter((s) => s.hosts.includes(cropHost(c as never))).length).toBe(1);
    for (const s of shards) expect(s.crops).toBe(all.filter((c) => s.hosts.includes(cropHost(c as never))).length);
    expect(shards.reduce((a, s) => a + s.crops, 0)).toBe(all.length);
  });
  it('balances by estimated requests: largest first on the least-loaded shard', () => {
    const shards = partitionByHost(all as never, 3);
    // 120 | 80 | 60 → then 40 to the 60-shard (100), 25 to the 80-shard (105)
    expect(shards.map((s) => [s.hosts, s.estimatedRequests])).toEqual([[['a.example.org'], 120], [['b.example.org', 'e.example.org'], 105], [['c.example.org:8443', 'd.example.org'], 100]]);
    // the heaviest shard is within 4/3 of the lower bound max(largest host, total / n) (Graham 1969)
    const total = 325, bound = Math.max(120, total / 3);
    expect(Math.max(...shards.map((s) => s.estimatedRequests))).toBeLessThanOrEqual((4 / 3) * bound);
  });
  it('counts a request shared by crops once (level-0 tiles)', () => {
    const shared = [{ key: 'k1', stitch: { pieces: [{ url: 'https://t.example.org/x/0,0,256,256/256,/0/default.jpg' }] } }, { key: 'k2', stitch: { pieces: [{ url: 'https://t.example.org/x/0,0,256,256/256,/0/default.jpg' }] } }];
    expect(partitionByHost(shared as never, 2)[0]).toMatchObject({ hosts: ['t.example.org'], crops: 2, estimatedRequests: 1 });
  });
  it('is stable when a smaller host is added, and independent of input order', () => {
    const before = partitionByHost(all as never, 3);
    const after = partitionByHost([...all, ...crops('f.example.org', 10)] as never, 3);
    for (const s of before) for (const h of s.hosts) expect(after.find((x) => x.hosts.includes(h))!.index).toBe(s.index);
    expect(partitionByHost([...all].reverse() as never, 3)).toEqual(before);
  });
  it('more shards than hosts leaves shards empty rather than splitting a host', () => {
    const shards = partitionByHost(crops('only.example.org', 10) as never, 4);
    expect(shards.map((s) => s.crops)).toEqual([10, 0, 0, 0]);
    expect(() => partitionByHost([], 0)).toThrow(RangeError);
  });
});
