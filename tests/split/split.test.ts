import { describe, expect, it } from 'vitest';
import { assignSplits, BALANCE_BOUND, BALANCE_MIN_GROUPS, hashedSplit } from '../../src/split/assign.ts';
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
  it('multi-index candidates find exactly the pairs an all-pairs comparison finds, for every distance 0–12', () => {
    const r = rng(99);
    const hex = (bits: bigint) => bits.toString(16).padStart(16, '0');
    for (let c = 0; c < 40; c++) {
      // Clusters: a few centres, items a few random bit flips away from one, in a few groups; flat items among them.
      const centres = Array.from({ length: 1 + (c % 4) }, () => (BigInt(Math.floor(r() * 2 ** 32)) << 32n) | BigInt(Math.floor(r() * 2 ** 32)));
      const items = Array.from({ length: 30 + (c % 50) }, (_, i) => {
        let h = centres[Math.floor(r() * centres.length)]!;
        for (let f = Math.floor(r() * 9); f > 0; f--) h ^= 1n << BigInt(Math.floor(r() * 64));
        return { id: `p${String(i).padStart(3, '0')}`, group: `g${Math.floor(r() * 5)}`, hash: hex(h), textured: r() > 0.1 };
      });
      const d = c % 13;
      const brute: [string, string, number][] = [];
      const t = items.filter((x) => x.textured);
      for (const x of t) for (const y of t) {
        if (x.id >= y.id || x.group === y.group) continue;
        let bits = BigInt(`0x${x.hash}`) ^ BigInt(`0x${y.hash}`), n = 0;
        for (; bits; bits >>= 1n) n += Number(bits & 1n);
        if (n <= d) brute.push([x.id, y.id, n]);
      }
      brute.sort((p, q) => (p[0] < q[0] ? -1 : p[0] > q[0] ? 1 : p[1] < q[1] ? -1 : p[1] > q[1] ? 1 : 0));
      expect(nearDuplicatePairs(items, d).map((p) => [p.a, p.b, p.distance]), `case ${c}, d ${d}`).toEqual(brute);
    }
  });
  it('merges linked groups under their smallest key', () => {
    const m = mergeGroups(['g3', 'g1', 'g2', 'g4'], [['g2', 'g3'], ['g3', 'g1']]);
    expect(Object.fromEntries(m)).toEqual({ g1: 'g1', g2: 'g1', g3: 'g1', g4: 'g4' });
  });
});

type Dist = 'uniform' | 'geometric' | 'lognormal';
/** A seeded generator (LCG, Numerical Recipes constants), so every property case is reproducible. */
function rng(seed: number) {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}
/** Groups with patches of 1–4 of four classes, sizes from one of three distributions. */
function randomGroups(r: () => number, n: number, prefix: string, dist: Dist) {
  const size = () =>
    dist === 'uniform'
      ? 1 + Math.floor(r() * 40)
      : dist === 'geometric'
        ? 1 + Math.floor(-Math.log(1 - r()) * 10)
        : Math.max(1, Math.round(Math.exp(2 + Math.sqrt(-2 * Math.log(1 - r())) * Math.cos(2 * Math.PI * r()))));
  return Array.from({ length: n }, (_, i) => {
    const classes: Record<string, number> = {};
    for (const c of ['oak', 'marble', 'gold', 'plain']) if (r() < 0.6) classes[c] = size();
    if (Object.keys(classes).length === 0) classes.oak = size();
    return { key: `${prefix}${i}`, classes };
  });
}
const DEMO_F = { train: 0.7, val: 0.15, test: 0.15 };
const DISTS: Dist[] = ['uniform', 'geometric', 'lognormal'];
const boundedDeviations = (a: ReturnType<typeof assignSplits>) => a.balance.filter((b) => b.bound).map((b) => b.deviation);
/** The largest deviation of any class with ≥ 20 groups, had every group gone where its hash sends it. */
function hashOnlyDeviation(groups: ReturnType<typeof randomGroups>, seed: string) {
  const byGroup = new Map(groups.map((g) => [g.key, hashedSplit(seed, g.key, DEMO_F).split]));
  let worst = 0;
  for (const c of ['oak', 'marble', 'gold', 'plain']) {
    const withC = groups.filter((g) => (g.classes[c] ?? 0) > 0);
    if (withC.length < BALANCE_MIN_GROUPS) continue;
    const total = withC.reduce((a, g) => a + g.classes[c]!, 0);
    for (const s of ['train', 'val', 'test'] as const) {
      const n = withC.filter((g) => byGroup.get(g.key) === s).reduce((a, g) => a + g.classes[c]!, 0);
      worst = Math.max(worst, Math.abs(n / total - DEMO_F[s]));
    }
  }
  return worst;
}

describe('balanced splits (property tests over seeded random group sizes)', () => {
  it('every class with at least 20 groups is within ±0.03 of each target, where hashing alone is not', () => {
    let hashWorst = 0;
    let cases = 0;
    for (const n of [40, 100, 300]) for (const dist of DISTS) for (let t = 0; t < 12; t++) {
      const groups = randomGroups(rng(1000 * n + 17 * t + dist.length), n, 'g', dist);
      const a = assignSplits(groups, `seed-${t}`, DEMO_F);
      const devs = boundedDeviations(a);
      cases += devs.length;
      for (const d of devs) expect(d).toBeLessThanOrEqual(BALANCE_BOUND);
      hashWorst = Math.max(hashWorst, hashOnlyDeviation(groups, `seed-${t}`));
    }
    expect(cases).toBeGreaterThan(300); // the bound was really exercised
    expect(hashWorst).toBeGreaterThan(0.1); // and hashing alone breaks it badly on the same inputs
  });
  it('the result does not depend on input order', () => {
    const groups = randomGroups(rng(7), 80, 'g', 'geometric');
    const a = assignSplits(groups, 's', DEMO_F);
    const b = assignSplits([...groups].reverse(), 's', DEMO_F);
    expect([...b.byGroup].sort()).toEqual([...a.byGroup].sort());
  });
  it('is a fixed point: assigning again from its own result moves nothing', () => {
    for (const dist of DISTS) {
      const groups = randomGroups(rng(dist.length), 50, 'g', dist);
      const a = assignSplits(groups, 's', DEMO_F);
      const again = assignSplits(groups, 's', DEMO_F, { previous: a.byGroup });
      expect(again.moves).toEqual(a.moves);
      expect([...again.byGroup]).toEqual([...a.byGroup]);
    }
  });
});

describe('stable splits: adding 10 % more groups to a previous assignment', () => {
  it('moves at most 5 % of the existing groups, none from test to train, and keeps the bound', () => {
    let worstMoved = 0;
    for (const n of [60, 100, 300]) for (const dist of DISTS) for (let t = 0; t < 10; t++) {
      const r = rng(31 * n + 7 * t + dist.length);
      const old = randomGroups(r, n, 'g', dist);
      const added = randomGroups(r, Math.ceil(n / 10), 'new', dist);
      const before = assignSplits(old, `s${t}`, DEMO_F);
      const after = assignSplits([...old, ...added], `s${t}`, DEMO_F, { previous: before.byGroup });
      const moved = old.filter((g) => after.byGroup.get(g.key) !== before.byGroup.get(g.key));
      worstMoved = Math.max(worstMoved, moved.length / n);
      expect(moved.length / n).toBeLessThanOrEqual(0.05);
      expect(moved.filter((g) => before.byGroup.get(g.key) === 'test' && after.byGroup.get(g.key) === 'train')).toEqual([]);
      for (const d of boundedDeviations(after)) expect(d).toBeLessThanOrEqual(BALANCE_BOUND);
    }
    expect(worstMoved).toBeLessThan(0.05);
  });
  it('a previous test group is never sent to train even when balance would gain', () => {
    // Every old group sat in test; the one new group cannot fix train alone.
    const old = Array.from({ length: 30 }, (_, i) => ({ key: `g${i}`, classes: { oak: 5 } }));
    const previous = new Map(old.map((g) => [g.key, 'test' as const]));
    const a = assignSplits([...old, { key: 'new', classes: { oak: 5 } }], 's', DEMO_F, { previous });
    expect(old.filter((g) => a.byGroup.get(g.key) === 'train')).toEqual([]);
    const oldMoved = old.filter((g) => a.byGroup.get(g.key) !== 'test');
    expect(oldMoved.length).toBeGreaterThan(0); // balance did move old groups, to val only
    expect(oldMoved.every((g) => a.byGroup.get(g.key) === 'val')).toBe(true);
  });
});

describe('group-aware splits: pins and small classes', () => {
  const groups = (n: number, prefix = 'canvas:') => Array.from({ length: n }, (_, i) => ({ key: `${prefix}${i}`, classes: { oak: 3, marble: i % 2 } }));
  it('equal groups: realised shares reach the fractions', () => {
    const a = assignSplits(groups(200), 'seed', F);
    const count = (s: string) => [...a.byGroup.values()].filter((x) => x === s).length / 200;
    expect(Math.abs(count('train') - 0.6)).toBeLessThanOrEqual(0.03);
    expect(Math.abs(count('val') - 0.2)).toBeLessThanOrEqual(0.03);
  });
  it('puts a class with enough groups in every split, and says why groups moved', () => {
    const rare = ['r1', 'r2', 'r3', 'r4'];
    let seed = 0;
    while (new Set(rare.map((g) => hashedSplit(String(seed), g, F).split)).size === 3) seed++;
    const a = assignSplits(rare.map((key) => ({ key, classes: { gilding: 1 } })), String(seed), F);
    expect(new Set(rare.map((g) => a.byGroup.get(g))).size).toBe(3);
    expect(a.moves.length).toBeGreaterThan(0);
    expect(a.moves[0].because).toBe('balance of gilding');
  });
  it('pinned groups keep their split and are never moved', () => {
    const g = groups(60);
    const pins = new Map(g.slice(0, 20).map((x) => [x.key, 'test' as const]));
    const a = assignSplits(g, 'seed', F, { pinned: pins });
    expect(a.pinned).toBe(20);
    for (const [k, s] of pins) expect(a.byGroup.get(k)).toBe(s);
    expect(a.moves.filter((m) => pins.has(m.group))).toEqual([]);
    // a pin to a split with no fraction is ignored
    expect(assignSplits(g, 'seed', { train: 1, val: 0, test: 0 }, { pinned: pins }).pinned).toBe(0);
  });
  it('reports a class with fewer groups than splits instead of inventing one', () => {
    const a = assignSplits([{ key: 'only', classes: { gilding: 5 } }], 's', F);
    expect(a.unrepairable).toEqual([{ label: 'gilding', missing: expect.any(Array), groups: 1 }]);
    expect(a.unrepairable[0].missing.length).toBe(2);
    expect(a.balance[0]).toMatchObject({ label: 'gilding', groups: 1, bound: false });
  });
});
