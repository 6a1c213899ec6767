import type { Shape } from '../geometry/shape.ts';
import type { Board } from './boards.ts';

/** Where a board is painted on its canvas (canvas units): the whole canvas, or inset for every ninth board. */
export function boardPlacement(board: Board, index: number): { canvasWidth: number; canvasHeight: number; x: number; y: number; w: number; h: number } {
  const w = board.width * board.canvasPerPixel, h = board.height * board.canvasPerPixel;
  if (index % 9 === 5) return { canvasWidth: w + 120, canvasHeight: h + 80, x: 120, y: 40, w, h };
  return { canvasWidth: w, canvasHeight: h, x: 0, y: 0, w, h };
}

/** A board region (image pixels) in canvas units: scaled by `k`, moved by `dx`, `dy`. */
export function shapeToCanvas(shape: Shape, k: number, dx: number, dy: number): Shape {
  if (shape.kind === 'rect') return { kind: 'rect', rect: { x: shape.rect.x * k + dx, y: shape.rect.y * k + dy, w: shape.rect.w * k, h: shape.rect.h * k } };
  return { kind: 'polygon', rings: shape.rings.map((r) => r.map((p) => ({ x: p.x * k + dx, y: p.y * k + dy }))) };
}

/** Three decimals, as annotation tools write coordinates. */
export const round3 = (v: number) => +v.toFixed(3);

export const canvasIdOf = (base: string, b: Board) => `${base}/canvas/${b.slug}`;
