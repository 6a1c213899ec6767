import { describe, expect, it } from 'vitest';
import { gridOrigins, positivePatches } from '../../src/patch/positives.ts';
import { negativeCandidates, NegativeCanvas, planNegatives, proportionalQuotas } from '../../src/patch/negatives.ts';
import { intersects } from '../../src/geometry/rect.ts';

describe('positive patches (pure)', () => {
  it('grid origins are anchored at 0, not at the region', () => {
    expect(gridOrigins(100, 300, 64, 64)).toEqual([128, 192, 256, 320]);
    expect(gridOrigins(100, 50, 64, 64)).toEqual([]);
  });
  it('keeps patches by coverage, drops those under an occluder, and says when none fits', () => {
    // a right triangle with legs 128 on a 2-px-per-unit grid: 32-px patches below the diagonal are fully covered
    const shape = { kind: 'polygon' as const, rings: [[{ x: 0, y: 0 }, { x: 64, y: 0 }, { x: 0, y: 64 }]] };
    const r = positivePatches({ box: { x: 0, y: 0, w: 128, h: 128 }, px: 2, size: 32, stride: 32, minCoverage: 1, shape, occluders: [] });
    expect(r.fits).toBe(true);
    expect(r.patches.map((p) => [p.u, p.v])).toEqual([[0, 0], [32, 0], [64, 0], [0, 32], [32, 32], [0, 64]]);
    expect(r.patches[1].canvasRegion).toEqual({ x: 16, y: 0, w: 16, h: 16 });
    const hidden = positivePatches({ box: { x: 0, y: 0, w: 128, h: 128 }, px: 2, size: 32, stride: 32, minCoverage: 1, shape, occluders: [{ x: 0, y: 0, w: 10, h: 10 }] });
    expect(hidden.hidden).toBe(1);
    expect(hidden.patches).toHaveLength(5);
    expect(positivePatches({ box: { x: 0, y: 0, w: 20, h: 20 }, px: 1, size: 32, stride: 32, minCoverage: 1, shape, occluders: [] }).fits).toBe(false);
  });
});

describe('negative sampling (pure)', () => {
  const spec = { seed: 's', ratio: 1, margin: 4, size: 16, classes: 2 };
  const canvas = (key: string, positives: number, group = `canvas:${key}`, obstacles = [{ x: 0, y: 0, w: 40, h: 40 }]): NegativeCanvas =>
    ({ key, group, positives, px: 1, painted: { x: 0, y: 0, w: 128, h: 96 }, obstacles, rankKey: key });

  it('largest-remainder quotas add up to what is wanted, ties broken by key', () => {
    expect(proportionalQuotas([{ key: 'a', weight: 1 }, { key: 'b', weight: 1 }, { key: 'c', weight: 1 }], 4)).toEqual([2, 1, 1]);
    expect(proportionalQuotas([{ key: 'a', weight: 3 }, { key: 'b', weight: 1 }], 10)).toEqual([8, 2]);
  });
  it('candidates keep the margin from every obstacle and are in a seeded order independent of the other canvases', () => {
    const c = canvas('a', 10);
    const list = negativeCandidates(c, spec);
    expect(list.length).toBeGreaterThan(10);
    for (const p of list) expect(intersects({ x: p.u - 4, y: p.v - 4, w: 24, h: 24 }, c.obstacles[0])).toBe(false);
    expect(negativeCandidates({ ...c, rankKey: 'a' }, spec)).toEqual(list);
    expect(negativeCandidates({ ...c, rankKey: 'other' }, spec)).not.toEqual(list);
  });
  it('ratio × positives of the average class, the same picks whatever the input order, borrowing only within a group', () => {
    const canvases = [canvas('a', 30, 'g1'), canvas('b', 10, 'g1', [{ x: 0, y: 0, w: 128, h: 96 }]), canvas('c', 20, 'g2')];
    const plan = planNegatives(spec, canvases);
    expect(plan.wanted).toBe(30); // 60 positives / 2 classes
    expect(plan.picks.filter((p) => p.key === 'b')).toEqual([]); // b has no free room
    expect(plan.borrowedWithinGroup).toBe(5); // b's quota of 5 came from a, in its group
    expect(planNegatives(spec, [...canvases].reverse()).picks.sort((x, y) => (x.key + x.u + ',' + x.v < y.key + y.u + ',' + y.v ? -1 : 1)))
      .toEqual([...plan.picks].sort((x, y) => (x.key + x.u + ',' + x.v < y.key + y.u + ',' + y.v ? -1 : 1)));
    expect(plan.shortfall).toBe(0);
  });
});
