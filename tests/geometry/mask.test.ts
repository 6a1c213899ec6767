import { describe, expect, it } from 'vitest';
import { coverage, integralOf, rasterise } from '../../src/geometry/mask.ts';
import { Shape, pointInShape, shapeArea } from '../../src/geometry/shape.ts';

const grid = (w: number, h: number, scale = 1, originX = 0, originY = 0) => ({ originX, originY, scaleX: scale, scaleY: scale, width: w, height: h });

/** The definition: a pixel is set when its centre passes the point-in-shape test of any shape. */
function referenceMask(shapes: Shape[], g: ReturnType<typeof grid>): Uint8Array {
  const data = new Uint8Array(g.width * g.height);
  for (let j = 0; j < g.height; j++) {
    const y = g.originY + (j + 0.5) / g.scaleY;
    for (let i = 0; i < g.width; i++) {
      const x = g.originX + (i + 0.5) / g.scaleX;
      if (shapes.some((s) => pointInShape(s, x, y))) data[j * g.width + i] = 1;
    }
  }
  return data;
}

describe('rasterised masks, pixel-centre rule', () => {
  it('scan conversion sets exactly the pixels the per-pixel test sets (random polygons, holes, self-crossings, shared edges)', () => {
    let seed = 7;
    const rand = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
    for (let c = 0; c < 200; c++) {
      // Vertices on a coarse lattice half the time, so edges often pass exactly through pixel centres.
      const coord = (span: number) => (c % 2 ? Math.round(rand() * span * 2) / 2 : rand() * span);
      const shapes: Shape[] = Array.from({ length: 1 + (c % 3) }, (_, k) =>
        k === 2
          ? { kind: 'rect', rect: { x: coord(30), y: coord(30), w: coord(20), h: coord(20) } }
          : { kind: 'polygon', rings: Array.from({ length: 1 + (c % 2) }, () => Array.from({ length: 3 + Math.floor(rand() * 6) }, () => ({ x: coord(40), y: coord(40) }))) },
      );
      const g = grid(17 + (c % 23), 13 + (c % 19), [1, 2, 0.5, 3.7][c % 4], coord(5) - 2, coord(5) - 2);
      expect(Buffer.from(rasterise(shapes, g).data).equals(Buffer.from(referenceMask(shapes, g))), `case ${c}`).toBe(true);
    }
  });

  it('covers exactly w×h pixels for a rectangle at integer coordinates', () => {
    const m = rasterise([{ kind: 'rect', rect: { x: 2, y: 3, w: 5, h: 4 } }], grid(10, 10));
    expect(m.data.reduce((a, b) => a + b, 0)).toBe(20);
    expect(coverage(m, { x: 2, y: 3, w: 5, h: 4 })).toBe(1);
  });
  it('a right triangle covers half its box (exact area by hand: ½·b·h)', () => {
    // Triangle (0,0),(100,0),(0,100): area 5000 of a 10000 box. Pixel centres (i+.5, j+.5) are inside when i+j+1 < 100:
    // count = Σ_{j=0}^{98} (99−j) = 4950 pixels, i.e. 0.495, converging to 0.5 as pixels shrink.
    const tri: Shape = { kind: 'polygon', rings: [[{ x: 0, y: 0 }, { x: 100, y: 0 }, { x: 0, y: 100 }]] };
    expect(shapeArea(tri)).toBe(5000);
    const m = rasterise([tri], grid(100, 100));
    expect(coverage(m, { x: 0, y: 0, w: 100, h: 100 })).toBe(0.495);
    const fine = rasterise([tri], grid(400, 400, 4));
    expect(Math.abs(coverage(fine, { x: 0, y: 0, w: 400, h: 400 }) - 0.5)).toBeLessThan(0.002);
  });
  it('treats an inner ring as a hole (even-odd rule, SVG fill-rule evenodd)', () => {
    const ring = (x: number, y: number, s: number) => [{ x, y }, { x: x + s, y }, { x: x + s, y: y + s }, { x, y: y + s }];
    const donut: Shape = { kind: 'polygon', rings: [ring(0, 0, 10), ring(2, 2, 6)] };
    expect(shapeArea(donut)).toBe(100 - 36);
    const m = rasterise([donut], grid(10, 10));
    expect(m.data.reduce((a, b) => a + b, 0)).toBe(64);
  });
  it('maps grid pixels to shape space through origin and scale', () => {
    // Shape in canvas units; grid at 2 px per unit starting at canvas (10,10).
    const m = rasterise([{ kind: 'rect', rect: { x: 10, y: 10, w: 5, h: 5 } }], grid(20, 20, 2, 10, 10));
    expect(m.data.reduce((a, b) => a + b, 0)).toBe(100);
    expect(coverage(m, { x: 0, y: 0, w: 10, h: 10 })).toBe(1);
    expect(coverage(m, { x: 5, y: 5, w: 10, h: 10 })).toBe(0.25);
  });
  it('integral-image coverage equals direct counting', () => {
    const tri: Shape = { kind: 'polygon', rings: [[{ x: 3, y: 1 }, { x: 37, y: 9 }, { x: 12, y: 30 }]] };
    const m = rasterise([tri], grid(40, 32));
    const fast = integralOf(m);
    for (const box of [{ x: 0, y: 0, w: 40, h: 32 }, { x: 5, y: 5, w: 8, h: 8 }, { x: 30, y: 20, w: 16, h: 16 }]) {
      expect(fast(box)).toBeCloseTo(coverage(m, box), 12);
    }
  });
});
