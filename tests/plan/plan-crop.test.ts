import { describe, expect, it } from 'vitest';
import { planCrop } from '../../src/plan/plan-crop.ts';
import { PlanError } from '../../src/errors.ts';
import { chooseScaleFactor, tilesCovering } from '../../src/plan/level0.ts';
import { splitWithinLimits } from '../../src/plan/limits.ts';
import { outputBox, resolveScale } from '../../src/plan/scale.ts';
import { parseInfoJson, ImageService } from '../../src/iiif/image-service.ts';
import type { Placement } from '../../src/geometry/placement.ts';
import { fixture } from '../helpers.ts';

const level0 = parseInfoJson(fixture('info/v3-level0-tiles.json'), 'https://iiif.example.org/iiif/3/board-07/info.json');
const v3spec = parseInfoJson(fixture('info/v3-spec-example.json'), 'https://iiif.example.org/image-service/abcd1234/info.json');
const v2iip = parseInfoJson(fixture('info/v2-level1-query-id.json'), 'https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif/info.json');
const whole = (svc: ImageService, canvasW = svc.width, canvasH = svc.height): Placement => ({
  target: { x: 0, y: 0, w: canvasW, h: canvasH }, source: { x: 0, y: 0, w: svc.width, h: svc.height }, imageWidth: svc.width, imageHeight: svc.height,
});

describe('level-0 tiles (Image API 3.0 implementation notes §3)', () => {
  it('gives the spec-derived tile URL for s=4, tile (2,1) (iiif-facts check value 7)', () => {
    const tiles = tilesCovering(level0, level0.tiles[0], 4, { x: 4096, y: 2048, w: 1, h: 1 });
    expect(tiles.map((t) => t.url)).toEqual(['https://iiif.example.org/iiif/3/board-07/4096,2048,1904,1952/476,488/0/default.jpg']);
  });
  it('the grid at s=4 is 3 columns × 2 rows', () => {
    const tiles = tilesCovering(level0, level0.tiles[0], 4, { x: 0, y: 0, w: 6000, h: 4000 });
    expect(tiles.length).toBe(6);
    expect(Math.max(...tiles.map((t) => t.col)) + 1).toBe(3);
  });
  it('v2 tiles use the w, size form (Image API 2.1 §4.7; check value 8)', () => {
    const v2 = { ...level0, version: 2 as const };
    expect(tilesCovering(v2, level0.tiles[0], 4, { x: 4096, y: 2048, w: 1, h: 1 })[0].url).toBe('https://iiif.example.org/iiif/3/board-07/4096,2048,1904,1952/476,/0/default.jpg');
  });
  it('chooses the largest factor whose resolution is still enough', () => {
    expect(chooseScaleFactor(level0.tiles, 0.25)?.sf).toBe(4);
    expect(chooseScaleFactor(level0.tiles, 0.3)?.sf).toBe(2);
    expect(chooseScaleFactor(level0.tiles, 1)?.sf).toBe(1);
    expect(chooseScaleFactor(level0.tiles, 2)?.sf).toBe(1); // upscaling: finest available
  });
  it('stitches a crop that needs four tiles at native scale, with no resampling', () => {
    const crop = planCrop({ service: level0, placement: whole(level0), scale: 1, canvasRect: { x: 400, y: 300, w: 300, h: 400 }, format: 'jpg' });
    expect(crop.stitch.pieces.map((p) => p.url)).toEqual([
      'https://iiif.example.org/iiif/3/board-07/0,0,512,512/512,512/0/default.jpg',
      'https://iiif.example.org/iiif/3/board-07/512,0,512,512/512,512/0/default.jpg',
      'https://iiif.example.org/iiif/3/board-07/0,512,512,512/512,512/0/default.jpg',
      'https://iiif.example.org/iiif/3/board-07/512,512,512,512/512,512/0/default.jpg',
    ]);
    expect(crop.stitch.pieces.map((p) => [p.left, p.top])).toEqual([[0, 0], [512, 0], [0, 512], [512, 512]]);
    expect(crop.stitch.extract).toEqual({ x: 400, y: 300, w: 300, h: 400 });
    expect(crop.stitch.resize).toBeUndefined();
    expect(crop.imageRegion).toEqual({ x: 400, y: 300, w: 300, h: 400 });
  });
  it('at half scale uses factor 2 tiles and needs no resampling when aligned', () => {
    const crop = planCrop({ service: level0, placement: whole(level0), scale: 0.5, canvasRect: { x: 1000, y: 1000, w: 200, h: 200 }, format: 'jpg' });
    expect(crop.outputBox).toEqual({ x: 500, y: 500, w: 100, h: 100 });
    expect(crop.stitch.pieces.map((p) => p.url)).toEqual(['https://iiif.example.org/iiif/3/board-07/0,0,1024,1024/512,512/0/default.jpg',
      'https://iiif.example.org/iiif/3/board-07/1024,0,1024,1024/512,512/0/default.jpg',
      'https://iiif.example.org/iiif/3/board-07/0,1024,1024,1024/512,512/0/default.jpg',
      'https://iiif.example.org/iiif/3/board-07/1024,1024,1024,1024/512,512/0/default.jpg']);
    expect(crop.stitch.extract).toEqual({ x: 500, y: 500, w: 100, h: 100 });
    expect(crop.stitch.resize).toBeUndefined();
  });
});

describe('server limits (Image API 3.0 §5.2)', () => {
  it('splits a grid whose cells respect maxWidth, maxHeight and maxArea', () => {
    const cells = splitWithinLimits(5000, 1000, { maxWidth: 3000, maxHeight: 2000, maxArea: 1_000_000 });
    for (const c of cells) {
      expect(c.w).toBeLessThanOrEqual(3000);
      expect(c.w * c.h).toBeLessThanOrEqual(1_000_000);
    }
    expect(cells.reduce((a, c) => a + c.w * c.h, 0)).toBe(5_000_000);
    expect(cells.length).toBe(5);
  });
  it('a crop larger than maxArea becomes several requests that tile the output exactly', () => {
    const svc: ImageService = { ...v3spec, maxWidth: 3000, maxHeight: 2000, maxArea: 250_000 };
    const crop = planCrop({ service: svc, placement: whole(svc), scale: 1, canvasRect: { x: 100, y: 200, w: 800, h: 600 }, format: 'png' });
    expect(crop.stitch.pieces.length).toBeGreaterThan(1);
    let covered = 0;
    for (const p of crop.stitch.pieces) {
      expect(p.width * p.height).toBeLessThanOrEqual(250_000);
      covered += p.width * p.height;
      const m = /\/(\d+),(\d+),(\d+),(\d+)\/(\d+),(\d+)\/0\/default\.png$/.exec(p.url)!;
      expect(Number(m[1])).toBe(100 + p.left); // native scale: region offset = mosaic offset
      expect([Number(m[5]), Number(m[6])]).toEqual([p.width, p.height]);
    }
    expect(covered).toBe(800 * 600);
    expect(crop.notes.join(' ')).toMatch(/split into \d+ requests/);
  });
});

describe('requests at a fixed scale', () => {
  it('a canvas whose image is twice its size: scale 1 px/unit asks the server for half size', () => {
    const svc: ImageService = { ...v3spec, maxWidth: undefined, maxHeight: undefined, maxArea: undefined };
    const crop = planCrop({ service: svc, placement: whole(svc, 3000, 2000), scale: 1, canvasRect: { x: 100, y: 50, w: 200, h: 100 }, format: 'jpg' });
    expect(crop.stitch.pieces.map((p) => p.url)).toEqual(['https://iiif.example.org/image-service/abcd1234/200,100,400,200/200,100/0/default.jpg']);
    expect(crop.imageRegion).toEqual({ x: 200, y: 100, w: 400, h: 200 });
    expect(crop.canvasRegion).toEqual({ x: 100, y: 50, w: 200, h: 100 });
  });
  it('painted on the right half: canvas x 1000..2000 maps to image x 0..W', () => {
    const svc: ImageService = { ...v3spec, width: 2000, height: 2000, maxWidth: undefined, maxHeight: undefined, maxArea: undefined };
    const placement: Placement = { target: { x: 1000, y: 0, w: 1000, h: 1000 }, source: { x: 0, y: 0, w: 2000, h: 2000 }, imageWidth: 2000, imageHeight: 2000 };
    const crop = planCrop({ service: svc, placement, scale: 1, canvasRect: { x: 900, y: 100, w: 300, h: 100 }, format: 'jpg' });
    // clipped at the painted edge (canvas x 1000) → image x 0..400
    expect(crop.canvasRegion).toEqual({ x: 1000, y: 100, w: 200, h: 100 });
    expect(crop.stitch.pieces[0].url).toBe('https://iiif.example.org/image-service/abcd1234/0,200,400,200/200,100/0/default.jpg');
  });
  it('does not ask for upscaling without sizeUpscaling: fetches native and resamples', () => {
    const crop = planCrop({ service: { ...v3spec, maxArea: undefined }, placement: whole(v3spec), scale: 2, canvasRect: { x: 10, y: 10, w: 50, h: 40 }, format: 'jpg' });
    expect(crop.stitch.pieces.map((p) => p.url)).toEqual(['https://iiif.example.org/image-service/abcd1234/10,10,50,40/max/0/default.jpg']);
    expect(crop.stitch.resize).toEqual({ width: 100, height: 80 });
  });
  it('asks for ^w,h when the 3.0 service allows upscaling (Image API 3.0 §4.2)', () => {
    const svc: ImageService = { ...v3spec, features: [...v3spec.features, 'sizeUpscaling'] };
    const crop = planCrop({ service: svc, placement: whole(svc), scale: 2, canvasRect: { x: 10, y: 10, w: 50, h: 40 }, format: 'jpg' });
    expect(crop.stitch.pieces[0].url).toBe('https://iiif.example.org/image-service/abcd1234/10,10,50,40/^100,80/0/default.jpg');
  });
  it('falls back to jpg when png is not offered, and says so', () => {
    const crop = planCrop({ service: v2iip, placement: whole(v2iip), scale: 1, canvasRect: { x: 0, y: 0, w: 100, h: 100 }, format: 'png' });
    expect(crop.format).toBe('jpg');
    expect(crop.notes[0]).toMatch(/png not offered/);
    expect(crop.stitch.pieces[0].url).toBe('https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif/0,0,100,100/100,100/0/default.jpg');
  });
  it('v2 with maxWidth 512 (only) splits a 1200-wide crop into three columns', () => {
    const crop = planCrop({ service: v2iip, placement: whole(v2iip), scale: 1, canvasRect: { x: 0, y: 0, w: 1200, h: 300 }, format: 'jpg' });
    expect(crop.stitch.pieces.map((p) => p.width)).toEqual([400, 400, 400]);
  });
  it('refuses a region outside the painted image', () => {
    expect(() => planCrop({ service: v3spec, placement: whole(v3spec, 3000, 2000), scale: 1, canvasRect: { x: 4000, y: 10, w: 10, h: 10 }, format: 'jpg' })).toThrow(PlanError);
  });
});

describe('output size rounding', () => {
  it('snaps outward on the canvas-anchored grid: floor(x·s) .. ceil((x+w)·s)', () => {
    expect(outputBox({ x: 10.2, y: 0, w: 5, h: 5 }, 2)).toEqual({ x: 20, y: 0, w: 11, h: 10 });
    expect(outputBox({ x: 0.1 * 3, y: 0, w: 0.3, h: 1 }, 10)).toEqual({ x: 3, y: 0, w: 3, h: 10 }); // 0.30000000000000004·10 is 3, not 4
  });
  it('physical scale from the physical dimensions service (services annex §3.3)', () => {
    // physicalScale 0.0025 in per canvas unit: 1 unit = 0.0635 mm; at 15.748 px/mm that is 1.0 px per unit (400 ppi)
    const p = whole(v3spec);
    const r = resolveScale({ pixelsPerMm: 15.748 }, p, { canvas: { scale: 0.0025, units: 'in' } });
    expect(r?.basis).toBe('canvas-physdim');
    expect(r!.pixelsPerCanvasUnit).toBeCloseTo(1, 4);
    expect(resolveScale({ pixelsPerMm: 10 }, p, { mmPerCanvasUnit: 0.5 })).toEqual({ pixelsPerCanvasUnit: 5, basis: 'source-fallback', mmPerCanvasUnit: 0.5 });
    expect(resolveScale({ pixelsPerMm: 10 }, p, {})).toBeUndefined();
  });
});

describe('whole-image tiles', () => {
  it('uses the canonical full region for a tile covering the whole image (check value 9: s=16 → full/375,250)', () => {
    const tiles = tilesCovering(level0, level0.tiles[0], 16, { x: 0, y: 0, w: 10, h: 10 });
    expect(tiles.map((t) => [t.url, t.fallbackUrl])).toEqual([[
      'https://iiif.example.org/iiif/3/board-07/full/375,250/0/default.jpg',
      'https://iiif.example.org/iiif/3/board-07/0,0,6000,4000/375,250/0/default.jpg',
    ]]);
  });
});

describe('crop keys', () => {
  it('differ when one image is painted on two canvases at different places', () => {
    const svc: ImageService = { ...v3spec, maxWidth: undefined, maxHeight: undefined, maxArea: undefined };
    const a = planCrop({ service: svc, placement: whole(svc), scale: 1, canvasRect: { x: 500, y: 300, w: 64, h: 64 }, format: 'jpg' });
    const moved: Placement = { ...whole(svc), target: { x: 200, y: 100, w: svc.width, h: svc.height } };
    const b = planCrop({ service: svc, placement: moved, scale: 1, canvasRect: { x: 500, y: 300, w: 64, h: 64 }, format: 'jpg' });
    expect(a.outputBox).toEqual(b.outputBox);
    expect(a.key).not.toBe(b.key);
    expect(b.stitch.pieces[0].url).toContain('/300,200,64,64/');
  });
});
