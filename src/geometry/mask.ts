import type { Rect } from './rect.ts';
import type { Shape } from './shape.ts';

/**
 * A binary mask over a pixel grid. The grid maps pixel (i, j) to the space of
 * the shapes by `origin + (i + 0.5, j + 0.5) / scale`.
 *
 * Pixel-centre rule: a pixel belongs to a shape when its centre lies inside the
 * shape (left/top edges inside, right/bottom edges outside). This is the rule of
 * common scan-conversion practice; it makes a w×h rectangle at integer
 * coordinates cover exactly w×h pixels, and the coverage of a shape converge to
 * its exact area as the grid gets finer.
 */
export interface Mask {
  width: number;
  height: number;
  data: Uint8Array;
}

export interface Grid {
  /** Where pixel (0,0)'s top-left corner lies, in shape units. */
  originX: number;
  originY: number;
  /** Pixels per shape unit along x and y. */
  scaleX: number;
  scaleY: number;
  width: number;
  height: number;
}

/**
 * Scan conversion, row by row: the crossings of each shape with the row's
 * centre line are found once and sorted, and the row is filled in runs between
 * them. A pixel is inside a shape when an odd number of that shape's
 * crossings lie beyond its centre, with the very comparisons `pointInShape`
 * makes (`px < xCross`; for a rectangle `px >= x` and `px < x + w`), so the mask
 * is bit for bit the one the per-pixel test gives (a test checks it), at a cost
 * of O(rows × edges × log width) plus the fill, instead of O(pixels × edges).
 */
export function rasterise(shapes: readonly Shape[], grid: Grid): Mask {
  const { width, height } = grid;
  const data = new Uint8Array(width * height);
  const xs = new Float64Array(width);
  for (let i = 0; i < width; i++) xs[i] = grid.originX + (i + 0.5) / grid.scaleX;
  for (let j = 0; j < height; j++) {
    const y = grid.originY + (j + 0.5) / grid.scaleY;
    const row = j * width;
    for (const s of shapes) {
      const cuts = rowCrossings(s, y);
      if (cuts.length === 0) continue;
      // k = crossings at or before the pixel centre; inside when the rest, n - k, is odd. k steps up
      // at the first pixel whose centre reaches the next crossing: the row is runs between those pixels.
      let from = 0;
      for (let k = 0; k <= cuts.length; k++) {
        const to = k < cuts.length ? firstAtOrAfter(xs, cuts[k]) : width;
        if ((cuts.length - k) % 2 === 1 && to > from) data.fill(1, row + from, row + to);
        from = Math.max(from, to);
      }
    }
  }
  return { width, height, data };
}

/** The first index whose value is at least `x` (values ascending), or the length. */
function firstAtOrAfter(values: Float64Array, x: number): number {
  let lo = 0, hi = values.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (values[mid] >= x) hi = mid;
    else lo = mid + 1;
  }
  return lo;
}

/** Where the horizontal line at `y` crosses the shape's boundary, sorted (the crossings `pointInShape` counts). */
function rowCrossings(shape: Shape, y: number): number[] {
  if (shape.kind === 'rect') {
    const r = shape.rect;
    return y >= r.y && y < r.y + r.h ? [r.x, r.x + r.w] : [];
  }
  const out: number[] = [];
  for (const ring of shape.rings) {
    const n = ring.length;
    for (let i = 0, j = n - 1; i < n; j = i++) {
      const a = ring[i], b = ring[j];
      if (a.y > y !== b.y > y) out.push(a.x + ((y - a.y) * (b.x - a.x)) / (b.y - a.y));
    }
  }
  return out.sort((p, q) => p - q);
}

/** Fraction of the pixels of `box` (in mask pixels) that are set. Pixels outside the mask count as unset. */
export function coverage(mask: Mask, box: Rect): number {
  let on = 0;
  const total = box.w * box.h;
  if (total <= 0) return 0;
  const x0 = Math.max(0, box.x), y0 = Math.max(0, box.y);
  const x1 = Math.min(mask.width, box.x + box.w), y1 = Math.min(mask.height, box.y + box.h);
  for (let j = y0; j < y1; j++) {
    const row = j * mask.width;
    for (let i = x0; i < x1; i++) on += mask.data[row + i];
  }
  return on / total;
}

/** Summed-area table for O(1) coverage queries over many patches of one mask. */
export function integralOf(mask: Mask): (box: Rect) => number {
  const w = mask.width + 1;
  const sat = new Uint32Array(w * (mask.height + 1));
  const { data, width } = mask;
  for (let j = 0; j < mask.height; j++) {
    let rowSum = 0;
    const src = j * width, above = j * w + 1, here = above + w;
    for (let i = 0; i < width; i++) {
      rowSum += data[src + i];
      sat[here + i] = sat[above + i] + rowSum;
    }
  }
  return (box: Rect) => {
    const x0 = Math.max(0, Math.min(mask.width, box.x)), y0 = Math.max(0, Math.min(mask.height, box.y));
    const x1 = Math.max(0, Math.min(mask.width, box.x + box.w)), y1 = Math.max(0, Math.min(mask.height, box.y + box.h));
    const total = box.w * box.h;
    if (total <= 0) return 0;
    const on = sat[y1 * w + x1] - sat[y0 * w + x1] - sat[y1 * w + x0] + sat[y0 * w + x0];
    return on / total;
  };
}
