import { describe, expect, it } from 'vitest';
import { canvasToImage, clipToPlacement, imageToCanvas, Placement } from '../../src/geometry/placement.ts';

describe('canvas → image transform (Presentation 3.0 §5.3, derived mapping)', () => {
  it('maps the canvas centre of cookbook recipe 0004 (1920×1080 canvas, 640×360 image)', () => {
    // iiif-facts check value 13: canvas (960,540) → image (320,180), 3 canvas units per pixel
    const p: Placement = { target: { x: 0, y: 0, w: 1920, h: 1080 }, source: { x: 0, y: 0, w: 640, h: 360 }, imageWidth: 640, imageHeight: 360 };
    expect(canvasToImage(p, { x: 960, y: 540, w: 3, h: 3 })).toEqual({ x: 320, y: 180, w: 1, h: 1 });
  });
  it('maps a painted part of a canvas to the whole image (recipe 0036 numbers)', () => {
    // iiif-facts check value 14: image 2138×2414 painted at xywh=3949,994,1091,1232 on a 7216×5412 canvas
    const p: Placement = { target: { x: 3949, y: 994, w: 1091, h: 1232 }, source: { x: 0, y: 0, w: 2138, h: 2414 }, imageWidth: 2138, imageHeight: 2414 };
    const r = canvasToImage(p, { x: 3949, y: 994, w: 1091, h: 1232 });
    expect(r.x).toBeCloseTo(0, 9);
    expect(r.y).toBeCloseTo(0, 9);
    expect(r.w).toBeCloseTo(2138, 9);
    expect(r.h).toBeCloseTo(2414, 9);
    expect(2138 / 1091).toBeCloseTo(1.9597, 4);
    expect(imageToCanvas(p, r).x).toBeCloseTo(3949, 9);
  });
  it('adds the ImageApiSelector offset (recipe 0299 numbers)', () => {
    const p: Placement = { target: { x: 0, y: 0, w: 1768, h: 2080 }, source: { x: 1768, y: 2423, w: 1768, h: 2080 }, imageWidth: 3536, imageHeight: 4999 };
    expect(canvasToImage(p, { x: 100, y: 200, w: 50, h: 60 })).toEqual({ x: 1868, y: 2623, w: 50, h: 60 });
  });
  it('clips a region to the painted area and records the clipped share', () => {
    const p: Placement = { target: { x: 1000, y: 0, w: 1000, h: 1000 }, source: { x: 0, y: 0, w: 2500, h: 2500 }, imageWidth: 2500, imageHeight: 2500 };
    const { rect, clippedFraction } = clipToPlacement(p, { x: 900, y: 100, w: 200, h: 100 });
    expect(rect).toEqual({ x: 1000, y: 100, w: 100, h: 100 });
    expect(clippedFraction).toBe(0.5);
  });
});
