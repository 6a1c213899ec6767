import { describe, expect, it } from 'vitest';
import { assignSplits, hashedSplit } from '../../src/split/assign.ts';
import { mergeGroups, nearDuplicatePairs } from '../../src/split/near-duplicates.ts';

const F = { train: 0.6, val: 0.2, test: 0.2 };

describe('near-duplicates', () => {
  it('finds pairs across groups within the distance, using byte buckets, and ignores flat patches', () => {
    const items = [
      { id: 'a', group: 'g1', hash: 'f0f0f0f0f0f0f0f0', textured: true },
      { id: 'b', group: 'g2', hash: 'f0f0f0f0f0f0f0f1', textured: true }, // 1 bit from a
      { id: 'c', group: 'g3', hash: '0f0f0f0f0f0f0f0f', textured: true }, // 64 bits from a
      { id: 'd', group: 'g1', hash: 'f0f0f0f0f0f0f0f0', textured: true }, // same group as a: not a pair
      { id: 'e', group: 'g4', hash: 'f0f0f0f0f0f0f0f0', textured: false }, // flat: ignored
    ];
    const pairs = nearDuplicatePairs(items, 3);
    expect(pairs.map((p) => [p.a, p.b, p.distance])).toEqual([['a', 'b', 1], ['b', 'd', 1]]);
    // brute force (d ≥ 8) agrees on the same input
    expect(nearDuplicatePairs(items, 8).map((p) => [p.a, p.b])).toEqual([['a', 'b'], ['b', 'd']]);
  });
  it('merges linked groups under their smallest key', () => {
    const m = mergeGroups(['g3', 'g1', 'g2', 'g4'], [['g2', 'g3'], ['g3', 'g1']]);
    expect(Object.fromEntries(m)).toEqual({ g1: 'g1', g2: 'g1', g3: 'g1', g4: 'g4' });
  });
});

describe('group-aware stable splits', () => {
  const groups = (n: number, prefix = 'canvas:') => Array.from({ length: n }, (_, i) => ({ key: `${prefix}${i}`, classes: { oak: 3, marble: i % 2 } }));
  it('adding sources moves no existing group', () => {
    const before = assignSplits(groups(40), 'seed', F);
    const after = assignSplits([...groups(40), ...groups(25, 'canvas:new-')], 'seed', F);
    for (const [g, s] of before.byGroup) if (!before.moves.some((m) => m.group === g)) expect(after.byGroup.get(g)).toBe(s);
    expect(before.moves).toEqual([]);
    expect(after.moves).toEqual([]);
  });
  it('realised shares approach the fractions with many groups', () => {
    const a = assignSplits(groups(2000), 'seed', F);
    const count = (s: string) => [...a.byGroup.values()].filter((x) => x === s).length / 2000;
    expect(Math.abs(count('train') - 0.6)).toBeLessThan(0.04);
    expect(Math.abs(count('val') - 0.2)).toBeLessThan(0.04);
  });
  it('repairs a class missing from a split when it has enough groups, and reports the move', () => {
    // Find a seed where the 3 "rare" groups all hash to one split, then check the repair.
    const rare = ['r1', 'r2', 'r3', 'r4'];
    let seed = 0;
    while (new Set(rare.map((g) => hashedSplit(String(seed), g, F).split)).size === 3) seed++;
    const a = assignSplits(rare.map((key) => ({ key, classes: { gilding: 1 } })), String(seed), F);
    expect(new Set(rare.map((g) => a.byGroup.get(g))).size).toBe(3);
    expect(a.moves.length).toBeGreaterThan(0);
    expect(a.moves[0].because).toBe(`class gilding had no group in ${a.moves[0].to}`);
  });
  it('pinned groups keep their split and are never moved by the repair', () => {
    const g = groups(60);
    const pins = new Map(g.slice(0, 20).map((x) => [x.key, 'test' as const]));
    const a = assignSplits(g, 'seed', F, pins);
    expect(a.pinned).toBe(20);
    for (const [k, s] of pins) expect(a.byGroup.get(k)).toBe(s);
    expect(a.moves.filter((m) => pins.has(m.group))).toEqual([]);
    // a pin to a split with no fraction is ignored
    expect(assignSplits(g, 'seed', { train: 1, val: 0, test: 0 }, pins).pinned).toBe(0);
  });
  it('reports a class with fewer groups than splits instead of inventing one', () => {
    const a = assignSplits([{ key: 'only', classes: { gilding: 5 } }], 's', F);
    expect(a.unrepairable).toEqual([{ label: 'gilding', missing: expect.any(Array), groups: 1 }]);
    expect(a.unrepairable[0].missing.length).toBe(2);
  });
});
