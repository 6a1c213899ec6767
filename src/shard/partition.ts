import type { CropRequest } from '../plan/crop-request.ts';
import { byString } from '../util/hash.ts';

export interface ShardPlan {
  index: number;
  /** Image server hosts this shard alone fetches from. */
  hosts: string[];
  /** Crop keys of this shard, sorted. */
  crops: string[];
  /** Distinct requests its crops need (the load estimate it was balanced by). */
  estimatedRequests: number;
}

/** The host of a URL (lower case, with the port when one is given); `(unknown)` for what does not parse. */
export function hostOf(url: string): string {
  try {
    return new URL(url).host.toLowerCase();
  } catch {
    return '(unknown)';
  }
}

/**
 * Splits crops into `n` shards (pure), host by host: every crop of an image
 * server host goes to one shard, so N machines never multiply the load on one
 * institution (each host still sees at most the recipe's per-host limit, from one
 * shard). Hosts are weighed by the distinct requests their crops need and placed
 * largest first on the least-loaded shard (ties: the host name, the lowest shard),
 * which keeps the heaviest shard within 4/3 of the best possible (Graham 1969).
 * A host added later that is no larger than the existing ones goes last and moves
 * none of them. Within a shard, crops are sorted by key.
 */
export function partitionByHost(crops: readonly Pick<CropRequest, 'key' | 'stitch'>[], n: number): ShardPlan[] {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`the number of shards must be a positive integer, got ${n}`);
  const byHost = new Map<string, { crops: string[]; urls: Set<string> }>();
  for (const c of crops) {
    const host = hostOf(c.stitch.pieces[0]?.url ?? '');
    const e = byHost.get(host) ?? { crops: [], urls: new Set<string>() };
    e.crops.push(c.key);
    for (const p of c.stitch.pieces) e.urls.add(p.url);
    byHost.set(host, e);
  }
  const shards: ShardPlan[] = Array.from({ length: n }, (_, index) => ({ index, hosts: [], crops: [], estimatedRequests: 0 }));
  const hosts = [...byHost.entries()].sort((a, b) => b[1].urls.size - a[1].urls.size || byString(a[0], b[0]));
  for (const [host, e] of hosts) {
    const target = shards.reduce((best, s) => (s.estimatedRequests < best.estimatedRequests ? s : best), shards[0]!);
    target.hosts.push(host);
    target.crops.push(...e.crops);
    target.estimatedRequests += e.urls.size;
  }
  for (const s of shards) {
    s.hosts.sort(byString);
    s.crops.sort(byString);
  }
  return shards;
}
