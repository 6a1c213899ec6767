import { describe, expect, it } from 'vitest';
import { flattenPath } from '../../src/annotation/svg-path.ts';
import { svgShapes } from '../../src/annotation/svg-selector.ts';
import { boundsOf } from '../../src/geometry/rect.ts';
import { shapeArea } from '../../src/geometry/shape.ts';

const near = (a: { x: number; y: number }[][], b: { x: number; y: number }[][]) => {
  expect(a.length).toBe(b.length);
  a.forEach((ring, i) => {
    expect(ring.length).toBe(b[i].length);
    ring.forEach((p, j) => {
      expect(p.x).toBeCloseTo(b[i][j].x, 9);
      expect(p.y).toBeCloseTo(b[i][j].y, 9);
    });
  });
};

describe('SVG path data (SVG 1.1 §8.3)', () => {
  it('a path with relative commands equals its absolute twin', () => {
    near(flattenPath('m10,20 l30,0 h10 v40 l-40,0 z'), flattenPath('M10,20 L40,20 H50 V60 L10,60 Z'));
    near(flattenPath('M10 10 c 20 0 20 20 40 20 s 20 -20 40 -20'), flattenPath('M10 10 C 30 10 30 30 50 30 S 70 10 90 10'));
    near(flattenPath('M0 0 q 10 20 20 0 t 20 0'), flattenPath('M0 0 Q 10 20 20 0 T 40 0'));
  });
  it('treats extra pairs after moveto as implicit linetos, relative after m (SVG 1.1 §8.3.2)', () => {
    near(flattenPath('m 10 10 20 0 0 20'), flattenPath('M10 10 L30 10 L30 30'));
    near(flattenPath('M10 10 20 10 20 20'), flattenPath('M10 10 L20 10 L20 20'));
  });
  it('parses numbers without separators where unambiguous', () => {
    near(flattenPath('M1.5.5L-2-3'), flattenPath('M 1.5 0.5 L -2 -3'));
  });
  it('flattens a cubic within tolerance: a quarter circle stays within 0.25 units of radius 100', () => {
    // Cubic approximation of a quarter circle, k = 0.5523 (common practice); the flattening error is what we test.
    const k = 55.23;
    const [ring] = flattenPath(`M100,0 C100,${k} ${k},100 0,100`, 0.25);
    expect(ring.length).toBeGreaterThan(8);
    for (let i = 1; i < ring.length; i++) {
      const mx = (ring[i].x + ring[i - 1].x) / 2, my = (ring[i].y + ring[i - 1].y) / 2;
      expect(100 - Math.hypot(mx, my)).toBeLessThan(0.25 + 0.03); // chord sag plus the cubic's own 0.027% error
    }
  });
  it('bounds a curve by its extrema, not its end points (iiif-facts §4, derived)', () => {
    const [ring] = flattenPath('M0,0 C0,100 100,100 100,0');
    expect(boundsOf(ring).h).toBeCloseTo(75, 0); // a cubic with these controls peaks at 0.75·100
  });
  it('an arc flattens to an inscribed polygon whose area is within the tolerance band', () => {
    // Chords lie inside the circle at most `tol` from it, so the lost area is at most perimeter × tol.
    const tol = 0.05;
    const [ring] = flattenPath('M0,50 A50,50 0 1 0 100,50 A50,50 0 1 0 0,50 Z', tol);
    const a = shapeArea({ kind: 'polygon', rings: [ring] });
    expect(a).toBeLessThanOrEqual(Math.PI * 2500);
    expect(a).toBeGreaterThan(Math.PI * 2500 - 2 * Math.PI * 50 * tol);
    for (const p of ring) expect(Math.hypot(p.x - 50, p.y - 50)).toBeCloseTo(50, 9);
  });
  it.each(['L10 10', 'M10', 'M10,10 X20', 'M 0 0 A 1 1 0 2 0 3 3'])('refuses %s', (d) => expect(() => flattenPath(d)).toThrow(SyntaxError));
});

describe('SvgSelector values (Web Annotation §4.2.7)', () => {
  it('reads the bounding box of a cookbook-0261-like polygon path', () => {
    // iiif-facts check value 15 (derived): extremes 270..1530 × 661..1900 → xywh=270,661,1260,1239
    const rings = svgShapes("<svg xmlns='http://www.w3.org/2000/svg'><g><path d='M270,1900 L1530,1900 L1200,1200 L904,661 L600,1200 Z' /></g></svg>");
    expect(boundsOf(rings.flat())).toEqual({ x: 270, y: 661, w: 1260, h: 1239 });
  });
  it('reads polygon, polyline, rect and circle', () => {
    const rings = svgShapes('<svg><polygon points="0,0 10,0 10,10"/><polyline points="0 0 5 0 5 5"/><rect x="1" y="2" width="3" height="4"/><circle cx="5" cy="5" r="2"/></svg>');
    expect(rings).toHaveLength(4);
    expect(shapeArea({ kind: 'polygon', rings: [rings[2]] })).toBe(12);
  });
  it.each([
    ['<svg><polygon points="0,0 1,1 0,1"></svg>', /not well-formed/],
    ['<svg><polygon points=0,0/></svg>', /not well-formed/],
    ['<svg></svg><svg></svg>', /not well-formed/],
    ['<svg><text>hi</text></svg>', /holds no polygon/],
    ['<svg><polygon points="0,0 1,1"/></svg>', /three x,y points/],
    ['<svg><rect x="0" y="0" width="0" height="3"/></svg>', /positive width/],
    ['<svg><polygon transform="rotate(4)" points="0,0 1,1 0,1"/></svg>', /transform/],
    ['<!DOCTYPE svg><svg/>', /DOCTYPE/],
  ])('refuses %s', (svg, re) => expect(() => svgShapes(svg)).toThrow(re));
});
