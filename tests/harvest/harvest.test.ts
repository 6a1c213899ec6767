import { describe, expect, it } from 'vitest';
import { harvestCrops } from '../../src/harvest/harvest.ts';
import { stitchCrop } from '../../src/cut/stitch.ts';
import { parseInfoJson, ImageService } from '../../src/iiif/image-service.ts';
import { planCrop } from '../../src/plan/plan-crop.ts';
import type { Placement } from '../../src/geometry/placement.ts';
import { coordError, coordImage, decodeCoord, mockImageService } from '../coord-image.ts';
import { makeFetcher, nockSandbox } from '../net/harness.ts';

const HOST = 'https://tiles.example.org';
const box = nockSandbox();

const src = coordImage(1200, 900);
const whole = (s: ImageService): Placement => ({ target: { x: 0, y: 0, w: s.width, h: s.height }, source: { x: 0, y: 0, w: s.width, h: s.height }, imageWidth: s.width, imageHeight: s.height });

async function serviceFor(path: string, opts: Parameters<typeof mockImageService>[3]) {
  const mock = mockImageService(HOST, path, src, opts);
  const { fetcher } = makeFetcher(box.dir, { perHostRate: 1000 });
  const info = await fetcher.get(mock.infoUrl, 'json');
  return { mock, service: parseInfoJson(JSON.parse(info.body.toString()), mock.infoUrl) };
}

async function bodies(urls: string[]) {
  const { fetcher } = makeFetcher(box.dir, { mode: 'offline' });
  const map = new Map<string, Buffer>();
  for (const u of urls) map.set(u, (await fetcher.get(u, 'image')).body);
  return map;
}

describe('harvesting crops', () => {
  it('fetches level-0 tiles once when two crops share them, and stitches exact pixels', async () => {
    const { mock, service } = await serviceFor('/iiif/l0', { version: 3, level: 0, tiles: [{ width: 256, scaleFactors: [1, 2, 4] }] });
    const a = planCrop({ service, placement: whole(service), scale: 1, canvasRect: { x: 200, y: 200, w: 100, h: 100 }, format: 'png' });
    const b = planCrop({ service, placement: whole(service), scale: 1, canvasRect: { x: 240, y: 220, w: 60, h: 60 }, format: 'png' });
    expect(a.stitch.pieces.length).toBe(4); // crosses the 256 boundary both ways
    const { fetcher } = makeFetcher(box.dir, { perHostRate: 1000 });
    const result = await harvestCrops([a, b], fetcher);
    expect(result.summary).toMatchObject({ crops: 2, served: 2, failed: 0, uniquePieces: 4, requests: 4 });
    for (const [path, n] of mock.counts) if (path !== 'info.json') expect(n).toBe(1);
    // level-0 tiles are JPEG here (level0 offers jpg only) and the source is smooth: check coordinates within JPEG error
    const map = await bodies(a.stitch.pieces.map((p) => p.url));
    const { image } = await stitchCrop(a, (u) => map.get(u));
    expect([image.width, image.height]).toEqual([100, 100]);
    // JPEG quality 95 on smooth ramps: within 3 levels (measured 0–2; tolerance is common practice for q95)
    for (let j = 2; j < 98; j += 5) for (let i = 2; i < 98; i += 5) expect(coordError(image, i, j, 200 + i, 200 + j)).toBeLessThanOrEqual(3);
  });

  it('stitches a crop split by maxWidth from lossless pieces, pixel-exact', async () => {
    const { service } = await serviceFor('/iiif/l2', { version: 3, level: 2, maxWidth: 128 });
    const crop = planCrop({ service, placement: whole(service), scale: 1, canvasRect: { x: 300, y: 100, w: 300, h: 200 }, format: 'png' });
    expect(crop.stitch.pieces.length).toBe(6);
    const { fetcher } = makeFetcher(box.dir, { perHostRate: 1000 });
    const r = await harvestCrops([crop], fetcher);
    expect(r.failures).toEqual([]);
    const map = await bodies(crop.stitch.pieces.map((p) => p.url));
    const { image } = await stitchCrop(crop, (u) => map.get(u));
    for (let j = 0; j < image.height; j += 7) for (let i = 0; i < image.width; i += 7) expect(decodeCoord(image, i, j)).toEqual({ x: 300 + i, y: 100 + j });
  });

  it('records a silently shrunk image as a failure with its reason', async () => {
    const { service } = await serviceFor('/iiif/liar', { version: 3, level: 2, silentlyShrink: true, maxWidth: 128 });
    const honest = { ...service, maxWidth: undefined, maxHeight: undefined }; // as if the limit were not advertised
    const crop = planCrop({ service: honest, placement: whole(service), scale: 1, canvasRect: { x: 0, y: 0, w: 300, h: 200 }, format: 'png' });
    const { fetcher } = makeFetcher(box.dir, { perHostRate: 1000 });
    const r = await harvestCrops([crop], fetcher);
    expect(r.summary.failed).toBe(1);
    expect(r.failures[0]).toMatchObject({ stage: 'crop', key: crop.key, reason: expect.stringMatching(/returned 128×85 for a 300×200 request/) });
  });

  it('resumes after an interrupted run: only what was missing is fetched', async () => {
    const { mock, service } = await serviceFor('/iiif/resume', { version: 3, level: 2 });
    const crops = [0, 1, 2, 3, 4, 5].map((k) => planCrop({ service, placement: whole(service), scale: 0.5, canvasRect: { x: k * 150, y: 100, w: 140, h: 140 }, format: 'png' }));
    // First run: interrupted after three crops (as if killed).
    const first = makeFetcher(box.dir, { perHostRate: 1000 });
    await harvestCrops(crops.slice(0, 3), first.fetcher);
    const before = new Map(mock.counts);
    const second = makeFetcher(box.dir, { perHostRate: 1000 });
    const r = await harvestCrops(crops, second.fetcher);
    expect(r.summary).toMatchObject({ served: 6, requests: 3, fromCache: 3 });
    for (const crop of crops.slice(0, 3)) {
      const path = crop.stitch.pieces[0].url.slice(`${HOST}/iiif/resume/`.length);
      expect(mock.counts.get(path)).toBe(before.get(path)); // not asked again
    }
  });

  it('orders served crops and failures by key, not by arrival', async () => {
    const { service } = await serviceFor('/iiif/order', { version: 3, level: 2 });
    const crops = [5, 3, 1, 4, 2].map((k) => planCrop({ service, placement: whole(service), scale: 1, canvasRect: { x: k * 100, y: 0, w: 50, h: 50 }, format: 'png' }));
    const { fetcher } = makeFetcher(box.dir, { perHostRate: 1000, concurrency: 8, perHost: 8 });
    const r = await harvestCrops(crops, fetcher);
    expect([...r.served.keys()]).toEqual(crops.map((c) => c.key).sort());
  });
});

describe('decoding shared pieces', () => {
  it('decodes a piece shared by several crops once', async () => {
    const { memoisedDecoder } = await import('../../src/cut/stitch.ts');
    const sharp = (await import('sharp')).default;
    const png = await sharp({ create: { width: 8, height: 8, channels: 3, background: '#123456' } }).png().toBuffer();
    const decode = memoisedDecoder(2);
    const a = decode('u1', png), b = decode('u1', png);
    expect(a).toBe(b);
    expect((await a).data.subarray(0, 3)).toEqual(Buffer.from([0x12, 0x34, 0x56]));
    decode('u2', png);
    decode('u3', png); // capacity 2: u1 is evicted
    expect(decode('u1', png)).not.toBe(a);
  });
});
