import type { Rect } from '../geometry/rect.ts';
import { intersects } from '../geometry/rect.ts';
import { byString, seededUnit } from '../util/hash.ts';

/** A canvas that yielded positives, as negative sampling sees it: plain data, no lookups. */
export interface NegativeCanvas {
  /** The canvas key (manifest and canvas), unique in the dataset. */
  key: string;
  /** The split group its negatives join. */
  group: string;
  positives: number;
  /** Output pixels per canvas unit. */
  px: number;
  /** The painted image's area on the output grid (output pixels); undefined when nothing can be cut there. */
  painted?: Rect;
  /** Areas to keep clear, in canvas units: every annotated area, and images painted over this one. */
  obstacles: readonly Rect[];
  /** The key that seeds this canvas's candidate order (the canvas id, or the canvas key when ids are shared). */
  rankKey: string;
}

export interface NegativeSpec {
  seed: string;
  ratio: number;
  /** Output pixels kept clear around every obstacle. */
  margin: number;
  size: number;
  /** Number of classes: negatives are `ratio` × the positives of the average class. */
  classes: number;
}

/** A chosen negative: its canvas and output-pixel origin. */
export interface NegativePick {
  key: string;
  u: number;
  v: number;
}

export interface NegativePlan {
  picks: NegativePick[];
  wanted: number;
  planned: number;
  borrowedWithinGroup: number;
  shortfall: number;
}

/** Splits `wanted` over items in proportion to their weights: largest remainder, ties by key. */
export function proportionalQuotas(items: readonly { key: string; weight: number }[], wanted: number): number[] {
  const byKey = items.map((_, i) => i).sort((a, b) => byString(items[a]!.key, items[b]!.key));
  const quota = quotasInOrder(byKey.map((i) => items[i]!.weight), wanted);
  const out = new Array<number>(items.length);
  byKey.forEach((i, k) => (out[i] = quota[k]!));
  return out;
}

/**
 * Candidate origins on one canvas, in their seeded order: grid positions
 * (stride = size) inside the painted image whose patch, grown by the margin,
 * touches no obstacle. The order is `seededUnit(seed, 'negative', rankKey, u, v)`,
 * so it does not depend on input order or on other canvases.
 */
export function negativeCandidates(c: NegativeCanvas, spec: Pick<NegativeSpec, 'seed' | 'margin' | 'size'>): { u: number; v: number }[] {
  if (!c.painted) return [];
  const { size, margin } = spec;
  const { px, painted } = c;
  const list: { u: number; v: number; rank: number }[] = [];
  for (let v = Math.ceil(painted.y / size) * size; v + size <= painted.y + painted.h; v += size) {
    for (let u = Math.ceil(painted.x / size) * size; u + size <= painted.x + painted.w; u += size) {
      const grown = { x: (u - margin) / px, y: (v - margin) / px, w: (size + 2 * margin) / px, h: (size + 2 * margin) / px };
      if (c.obstacles.some((o) => intersects(grown, o) || (o.w === 0 && o.h === 0 && o.x >= grown.x && o.x <= grown.x + grown.w && o.y >= grown.y && o.y <= grown.y + grown.h))) continue;
      list.push({ u, v, rank: seededUnit(spec.seed, 'negative', c.rankKey, u, v) });
    }
  }
  list.sort((a, b) => a.rank - b.rank || a.v - b.v || a.u - b.u);
  return list.map(({ u, v }) => ({ u, v }));
}

/** How many negatives are wanted in all: `ratio` × the positives of the average class. */
export function negativesWanted(spec: Pick<NegativeSpec, 'ratio' | 'classes'>, positives: number): number {
  return spec.classes === 0 ? 0 : Math.round((spec.ratio * positives) / spec.classes);
}

/** Each canvas's share of the negatives, by canvas key: in proportion to its positives (largest remainder, ties by key). */
export function negativeQuotas(canvases: readonly Pick<NegativeCanvas, 'key' | 'positives'>[], wanted: number): Map<string, number> {
  const sorted = [...canvases].sort((a, b) => byString(a.key, b.key));
  const quota = quotasInOrder(Float64Array.from(sorted, (c) => c.positives), wanted);
  return new Map(sorted.map((c, i) => [c.key, quota[i]!]));
}

/**
 * `wanted` split over weights given in key order, in proportion to them: largest
 * remainder, ties to the earlier item (the smaller key). Typed arrays: a quota
 * per canvas of a hundred thousand canvases without an object per canvas.
 */
export function quotasInOrder(weights: Float64Array | readonly number[], wanted: number): Int32Array {
  const n = weights.length;
  const quota = new Int32Array(n);
  let total = 0;
  for (let i = 0; i < n; i++) total += weights[i]!;
  if (total === 0) return quota;
  const remainder = new Float64Array(n);
  let given = 0;
  for (let i = 0; i < n; i++) {
    const exact = (wanted * weights[i]!) / total;
    quota[i] = Math.floor(exact);
    remainder[i] = exact - quota[i]!;
    given += quota[i]!;
  }
  const order = Int32Array.from({ length: n }, (_, i) => i).sort((a, b) => remainder[b]! - remainder[a]! || a - b);
  for (let k = 0; k < n && given < wanted; k++, given++) quota[order[k]!]!++;
  return quota;
}

/**
 * Takes each canvas's quota of negatives (pure): its first candidates in seeded
 * order; a canvas short of candidates borrows from other canvases of its group,
 * so negatives never cross a split boundary. Canvases of one group must all be
 * in `canvases`: given a manifest's canvases at a time (groups never span
 * manifests), the picks are those of all canvases at once.
 */
export function pickNegatives(spec: NegativeSpec, canvases: readonly NegativeCanvas[], quotas: ReadonlyMap<string, number>): { picks: NegativePick[]; borrowedWithinGroup: number } {
  const sorted = [...canvases].sort((a, b) => byString(a.key, b.key));
  const picks: NegativePick[] = [];
  const taken = new Map<string, number>();
  const take = (c: NegativeCanvas, n: number): number => {
    if (n <= 0) return 0;
    const start = taken.get(c.key) ?? 0;
    const chosen = negativeCandidates(c, spec).slice(start, start + n);
    taken.set(c.key, start + chosen.length);
    for (const p of chosen) picks.push({ key: c.key, u: p.u, v: p.v });
    return chosen.length;
  };
  const shortBy: [NegativeCanvas, number][] = [];
  for (const c of sorted) {
    const quota = quotas.get(c.key) ?? 0;
    const got = take(c, quota);
    if (got < quota) shortBy.push([c, quota - got]);
  }
  let borrowed = 0;
  for (const [c, missing] of shortBy) {
    let need = missing;
    for (const other of sorted) {
      if (need === 0) break;
      if (other.key === c.key || other.group !== c.group) continue;
      const got = take(other, need);
      need -= got;
      borrowed += got;
    }
  }
  return { picks, borrowedWithinGroup: borrowed };
}

/**
 * Plans the negatives (pure): `ratio` × the positives of the average class,
 * given to canvases in proportion to their positives (largest remainder); each
 * canvas takes its first candidates in seeded order; a canvas short of
 * candidates borrows from other canvases of its group, so negatives never cross
 * a split boundary. Candidates are computed per canvas when needed and not kept:
 * memory stays flat in the number of canvases.
 */
export function planNegatives(spec: NegativeSpec, canvases: readonly NegativeCanvas[]): NegativePlan {
  const wanted = negativesWanted(spec, canvases.reduce((a, c) => a + c.positives, 0));
  if (wanted === 0) return { picks: [], wanted: 0, planned: 0, borrowedWithinGroup: 0, shortfall: 0 };
  const { picks, borrowedWithinGroup } = pickNegatives(spec, canvases, negativeQuotas(canvases, wanted));
  return { picks, wanted, planned: picks.length, borrowedWithinGroup, shortfall: wanted - picks.length };
}
