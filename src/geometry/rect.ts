/** An axis-aligned rectangle; x,y is the top-left corner. Units depend on the space. */
export interface Rect {
  x: number;
  y: number;
  w: number;
  h: number;
}

export interface Point {
  x: number;
  y: number;
}

export function rect(x: number, y: number, w: number, h: number): Rect {
  return { x, y, w, h };
}

export function right(r: Rect): number {
  return r.x + r.w;
}
export function bottom(r: Rect): number {
  return r.y + r.h;
}
export function area(r: Rect): number {
  return Math.max(0, r.w) * Math.max(0, r.h);
}
export function isEmpty(r: Rect): boolean {
  return !(r.w > 0 && r.h > 0);
}

/** The overlap of two rectangles; w or h is 0 when they do not overlap. */
export function intersect(a: Rect, b: Rect): Rect {
  const x0 = Math.max(a.x, b.x);
  const y0 = Math.max(a.y, b.y);
  const x1 = Math.min(right(a), right(b));
  const y1 = Math.min(bottom(a), bottom(b));
  return { x: x0, y: y0, w: Math.max(0, x1 - x0), h: Math.max(0, y1 - y0) };
}

export function intersects(a: Rect, b: Rect): boolean {
  return a.x < right(b) && b.x < right(a) && a.y < bottom(b) && b.y < bottom(a);
}

export function contains(outer: Rect, inner: Rect): boolean {
  return inner.x >= outer.x && inner.y >= outer.y && right(inner) <= right(outer) && bottom(inner) <= bottom(outer);
}

export function grow(r: Rect, by: number): Rect {
  return { x: r.x - by, y: r.y - by, w: r.w + 2 * by, h: r.h + 2 * by };
}

export function boundsOf(points: readonly Point[]): Rect {
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  for (const p of points) {
    if (p.x < x0) x0 = p.x;
    if (p.y < y0) y0 = p.y;
    if (p.x > x1) x1 = p.x;
    if (p.y > y1) y1 = p.y;
  }
  if (!Number.isFinite(x0)) return { x: 0, y: 0, w: 0, h: 0 };
  return { x: x0, y: y0, w: x1 - x0, h: y1 - y0 };
}

export function union(a: Rect, b: Rect): Rect {
  const x0 = Math.min(a.x, b.x), y0 = Math.min(a.y, b.y);
  return { x: x0, y: y0, w: Math.max(right(a), right(b)) - x0, h: Math.max(bottom(a), bottom(b)) - y0 };
}

/** Rounds to 1e-6 so floating noise never reaches hashed output. */
export function tidy(n: number): number {
  const r = Math.round(n * 1e6) / 1e6;
  return Object.is(r, -0) ? 0 : r;
}

export function tidyRect(r: Rect): Rect {
  return { x: tidy(r.x), y: tidy(r.y), w: tidy(r.w), h: tidy(r.h) };
}
