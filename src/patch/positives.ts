import type { Rect } from '../geometry/rect.ts';
import { intersects } from '../geometry/rect.ts';
import { integralOf, rasterise } from '../geometry/mask.ts';
import type { Shape } from '../geometry/shape.ts';

export interface PositiveGrid {
  /** The crop's box in output pixels (on the grid anchored at the canvas origin). */
  box: Rect;
  /** Output pixels per canvas unit. */
  px: number;
  size: number;
  stride: number;
  minCoverage: number;
  /** The labelled shape, in canvas units. */
  shape: Shape;
  /** Canvas areas where a later-painted image hides this one. */
  occluders: readonly Rect[];
}

export interface PositivePatch {
  /** Output-pixel origin of the patch on the canvas grid. */
  u: number;
  v: number;
  /** Where the patch lies inside the crop's output image. */
  inCrop: Rect;
  canvasRegion: Rect;
  /** Share of the patch's pixel centres inside the shape. */
  coverage: number;
}

/** Grid origins of `size`-px patches, `stride` apart, that fit in [start, start + len). */
export function gridOrigins(start: number, len: number, size: number, stride: number): number[] {
  const out: number[] = [];
  for (let u = Math.ceil(start / stride) * stride; u + size <= start + len; u += stride) out.push(u);
  return out;
}

/**
 * The positive patches of one region (pure): grid positions inside the crop
 * whose mask coverage (pixel-centre rule) reaches `minCoverage` and that no
 * later-painted image hides, in row-major order. `fits` is false when not even
 * one patch fits in the box; `hidden` counts patches dropped for an occluder.
 */
export function positivePatches(g: PositiveGrid): { patches: PositivePatch[]; fits: boolean; hidden: number } {
  const { box, px, size } = g;
  const us = gridOrigins(box.x, box.w, size, g.stride), vs = gridOrigins(box.y, box.h, size, g.stride);
  if (us.length === 0 || vs.length === 0) return { patches: [], fits: false, hidden: 0 };
  const mask = rasterise([g.shape], { originX: box.x / px, originY: box.y / px, scaleX: px, scaleY: px, width: box.w, height: box.h });
  const cover = integralOf(mask);
  const patches: PositivePatch[] = [];
  let hidden = 0;
  for (const v of vs) {
    for (const u of us) {
      const inCrop = { x: u - box.x, y: v - box.y, w: size, h: size };
      const coverage = cover(inCrop);
      if (coverage < g.minCoverage) continue;
      const canvasRegion = { x: u / px, y: v / px, w: size / px, h: size / px };
      // A patch partly under a later-painted image would show pixels nobody sees on the canvas.
      if (g.occluders.some((o) => intersects(canvasRegion, o))) {
        hidden++;
        continue;
      }
      patches.push({ u, v, inCrop, canvasRegion, coverage: Math.round(coverage * 1e4) / 1e4 });
    }
  }
  return { patches, fits: true, hidden };
}
