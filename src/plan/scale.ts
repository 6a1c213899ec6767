import type { Placement } from '../geometry/placement.ts';
import { PhysicalScale, millimetresPer } from '../iiif/image-service.ts';
import type { ScaleSpec } from '../recipe/types.ts';


export interface ResolvedScale {
  /** Output pixels per canvas unit: the one number every later stage uses. */
  pixelsPerCanvasUnit: number;
  /** How it was found, for provenance. */
  basis: 'relative' | 'canvas-physdim' | 'image-physdim' | 'source-fallback';
  /** Millimetres per canvas unit, when the scale is physical. */
  mmPerCanvasUnit?: number;
}

/**
 * Resolves the recipe's scale for one painted image.
 * Physical: px/canvas-unit = px/mm × mm/canvas-unit, where mm/canvas-unit comes from the canvas's
 * physical dimensions service (physicalScale × unit), else the image's (× image px per canvas unit),
 * else the source's `mmPerCanvasUnit` (services annex §3.3). Returns undefined when nothing gives it.
 */
export function resolveScale(
  spec: ScaleSpec,
  placement: Placement,
  physical: { canvas?: PhysicalScale; image?: PhysicalScale; mmPerCanvasUnit?: number },
): ResolvedScale | undefined {
  if ('pixelsPerCanvasUnit' in spec) return { pixelsPerCanvasUnit: spec.pixelsPerCanvasUnit, basis: 'relative' };
  if (physical.canvas) {
    const mm = physical.canvas.scale * millimetresPer(physical.canvas.units);
    return { pixelsPerCanvasUnit: spec.pixelsPerMm * mm, basis: 'canvas-physdim', mmPerCanvasUnit: mm };
  }
  if (physical.image) {
    const imagePxPerUnit = placement.source.w / placement.target.w;
    const mm = physical.image.scale * millimetresPer(physical.image.units) * imagePxPerUnit;
    return { pixelsPerCanvasUnit: spec.pixelsPerMm * mm, basis: 'image-physdim', mmPerCanvasUnit: mm };
  }
  if (physical.mmPerCanvasUnit !== undefined) {
    return { pixelsPerCanvasUnit: spec.pixelsPerMm * physical.mmPerCanvasUnit, basis: 'source-fallback', mmPerCanvasUnit: physical.mmPerCanvasUnit };
  }
  return undefined;
}

/**
 * The output-pixel box of a canvas rectangle at scale s. Rounding rule: the box
 * is snapped outward on the canvas-anchored output grid, `floor(x·s)` to
 * `ceil((x+w)·s)`, so it always contains the rectangle and neighbouring regions
 * share one grid. Values within 1e-9 of an integer count as that integer, so
 * floating noise never adds a pixel.
 */
export function outputBox(r: { x: number; y: number; w: number; h: number }, s: number): { x: number; y: number; w: number; h: number } {
  const x0 = floorTol(r.x * s), y0 = floorTol(r.y * s);
  const x1 = ceilTol((r.x + r.w) * s), y1 = ceilTol((r.y + r.h) * s);
  return { x: x0, y: y0, w: x1 - x0, h: y1 - y0 };
}

/** The output-pixel box lying wholly inside a canvas rectangle (snapped inward). */
export function innerOutputBox(r: { x: number; y: number; w: number; h: number }, s: number): { x: number; y: number; w: number; h: number } {
  const x0 = ceilTol(r.x * s), y0 = ceilTol(r.y * s);
  const x1 = floorTol((r.x + r.w) * s), y1 = floorTol((r.y + r.h) * s);
  return { x: x0, y: y0, w: Math.max(0, x1 - x0), h: Math.max(0, y1 - y0) };
}

export function floorTol(v: number): number {
  const r = Math.round(v);
  return Math.abs(v - r) < 1e-9 ? r : Math.floor(v);
}
export function ceilTol(v: number): number {
  const r = Math.round(v);
  return Math.abs(v - r) < 1e-9 ? r : Math.ceil(v);
}
