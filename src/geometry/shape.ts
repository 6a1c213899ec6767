import { Point, Rect, boundsOf } from './rect.ts';

/**
 * A region's geometry in canvas units: a rectangle, or polygon rings combined by
 * the even-odd rule (so a ring inside another is a hole, as in SVG `fill-rule: evenodd`).
 */
export type Shape = { kind: 'rect'; rect: Rect } | { kind: 'polygon'; rings: Point[][] };

export function shapeBounds(shape: Shape): Rect {
  if (shape.kind === 'rect') return shape.rect;
  return boundsOf(shape.rings.flat());
}

/** Even-odd point-in-polygon by ray crossing. Points on the left/top edge count as inside, on the right/bottom edge as outside. */
export function pointInRings(rings: readonly Point[][], px: number, py: number): boolean {
  let inside = false;
  for (const ring of rings) {
    const n = ring.length;
    for (let i = 0, j = n - 1; i < n; j = i++) {
      const a = ring[i], b = ring[j];
      if (a.y > py !== b.y > py) {
        const xCross = a.x + ((py - a.y) * (b.x - a.x)) / (b.y - a.y);
        if (px < xCross) inside = !inside;
      }
    }
  }
  return inside;
}

export function pointInShape(shape: Shape, px: number, py: number): boolean {
  if (shape.kind === 'rect') {
    const r = shape.rect;
    return px >= r.x && px < r.x + r.w && py >= r.y && py < r.y + r.h;
  }
  return pointInRings(shape.rings, px, py);
}

/** Area by the shoelace formula, even-odd aware only for nested simple rings (holes subtract). */
export function shapeArea(shape: Shape): number {
  if (shape.kind === 'rect') return shape.rect.w * shape.rect.h;
  let total = 0;
  for (const ring of shape.rings) {
    let a = 0;
    for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) a += (ring[j].x + ring[i].x) * (ring[j].y - ring[i].y);
    const ringArea = Math.abs(a) / 2;
    // A ring counts as a hole when a vertex lies inside an odd number of the other rings.
    const others = shape.rings.filter((r) => r !== ring);
    const p = ring[0];
    const depth = others.reduce((d, o) => d + (pointInRings([o], p.x, p.y) ? 1 : 0), 0);
    total += depth % 2 === 0 ? ringArea : -ringArea;
  }
  return total;
}

/** Applies an affine map x' = ax·x + bx, y' = ay·y + by to a shape. */
export function mapShape(shape: Shape, ax: number, bx: number, ay: number, by: number): Shape {
  if (shape.kind === 'rect') {
    const r = shape.rect;
    return { kind: 'rect', rect: { x: r.x * ax + bx, y: r.y * ay + by, w: r.w * ax, h: r.h * ay } };
  }
  return { kind: 'polygon', rings: shape.rings.map((ring) => ring.map((p) => ({ x: p.x * ax + bx, y: p.y * ay + by }))) };
}
