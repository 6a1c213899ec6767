import { Rect, intersect } from './rect.ts';

/**
 * How an image is painted onto a canvas (Presentation 3.0 §5.3): the image area
 * `source` (image pixels: the whole image, or an ImageApiSelector region) is
 * stretched onto `target` (canvas units: the whole canvas, or an `#xywh=` part).
 */
export interface Placement {
  target: Rect;
  source: Rect;
  imageWidth: number;
  imageHeight: number;
}

/** Image pixels per canvas unit along x and y. */
export function imagePerCanvas(p: Placement): { x: number; y: number } {
  return { x: p.source.w / p.target.w, y: p.source.h / p.target.h };
}

export function canvasToImage(p: Placement, r: Rect): Rect {
  const k = imagePerCanvas(p);
  return { x: p.source.x + (r.x - p.target.x) * k.x, y: p.source.y + (r.y - p.target.y) * k.y, w: r.w * k.x, h: r.h * k.y };
}

export function imageToCanvas(p: Placement, r: Rect): Rect {
  const k = imagePerCanvas(p);
  return { x: p.target.x + (r.x - p.source.x) / k.x, y: p.target.y + (r.y - p.source.y) / k.y, w: r.w / k.x, h: r.h / k.y };
}

/**
 * Clips a canvas rectangle to the painted area. `clippedFraction` is the share
 * of the rectangle's area that lay outside the image (0 when nothing was clipped).
 */
export function clipToPlacement(p: Placement, r: Rect): { rect: Rect; clippedFraction: number } {
  const clipped = intersect(r, p.target);
  const a = r.w * r.h;
  const fraction = a > 0 ? 1 - (clipped.w * clipped.h) / a : 1;
  return { rect: clipped, clippedFraction: Math.max(0, Math.min(1, fraction)) };
}
