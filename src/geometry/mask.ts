import type { Rect } from './rect.ts';
import { Shape, pointInShape } from './shape.ts';

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

export function rasterise(shapes: readonly Shape[], grid: Grid): Mask {
  const { width, height } = grid;
  const data = new Uint8Array(width * height);
  for (let j = 0; j < height; j++) {
    const y = grid.originY + (j + 0.5) / grid.scaleY;
    for (let i = 0; i < width; i++) {
      const x = grid.originX + (i + 0.5) / grid.scaleX;
      for (const s of shapes) {
        if (pointInShape(s, x, y)) {
          data[j * width + i] = 1;
          break;
        }
      }
    }
  }
  return { width, height, data };
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
  for (let j = 0; j < mask.height; j++) {
    let rowSum = 0;
    for (let i = 0; i < mask.width; i++) {
      rowSum += mask.data[j * mask.width + i];
      sat[(j + 1) * w + (i + 1)] = sat[j * w + (i + 1)] + rowSum;
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
