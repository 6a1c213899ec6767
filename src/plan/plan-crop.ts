import { PlanError } from '../errors.ts';
import type { Rect } from '../geometry/rect.ts';
import { intersect, isEmpty } from '../geometry/rect.ts';
import { Placement, canvasToImage } from '../geometry/placement.ts';
import {
  ImageService,
  canRequestExactSize,
  canRequestRegion,
  canUpscale,
  qualityFor,
} from '../iiif/image-service.ts';
import { imageRequestUrl, SizeParam } from '../iiif/image-url.ts';
import { stableId } from '../util/hash.ts';
import type { CropRequest, Piece, StitchRecipe } from './crop-request.ts';
import { chooseScaleFactor, tilesCovering } from './level0.ts';
import { splitWithinLimits } from './limits.ts';
import { innerOutputBox, outputBox } from './scale.ts';

export interface CropPlanInput {
  service: ImageService;
  placement: Placement;
  /** Output pixels per canvas unit. */
  scale: number;
  /** The wanted area, in canvas units. */
  canvasRect: Rect;
  format: 'jpg' | 'png';
  /** The recipe's quality in 2.x/3.0 spelling (default `default`); 1.x services get their own names. */
  quality?: string;
}


/**
 * Plans one crop: which image requests to make, and how to stitch, crop and
 * resample their results into an image of exactly `outputBox` size.
 *
 * Strategies, in order of preference:
 * 1. the server scales: `x,y,w,h` region and exact `w,h` size (`^w,h` when it may upscale),
 *    split into a grid of requests that each respect maxWidth/maxHeight/maxArea;
 * 2. the server crops at native size, we resample (no exact sizes, or upscaling not allowed);
 * 3. level 0: advertised tiles at the chosen scale factor (or a listed size, or the full image),
 *    stitched, cropped and resampled locally.
 */
export function planCrop(input: CropPlanInput): CropRequest {
  const { service, placement, scale: s } = input;
  const notes: string[] = [];
  const clipped = intersect(input.canvasRect, placement.target);
  if (isEmpty(clipped)) throw new PlanError('the region lies outside the painted image');
  const painted = innerOutputBox(placement.target, s);
  const box = intersect(outputBox(clipped, s), painted);
  if (isEmpty(box)) throw new PlanError(`the region is smaller than one output pixel at ${s} px per canvas unit`);

  const toCanvas = (r: Rect): Rect => ({ x: r.x / s, y: r.y / s, w: r.w / s, h: r.h / s });
  const imageRegion = canvasToImage(placement, toCanvas(box));
  const kx = (s * placement.target.w) / placement.source.w;
  const ky = (s * placement.target.h) / placement.source.h;

  let format: string = input.format;
  if (!service.formats.includes(format)) {
    notes.push(`format ${format} not offered by the service; asked for jpg`);
    format = 'jpg';
  }
  const q = qualityFor(service, input.quality ?? 'default');
  const quality = q.quality;
  if (q.note) notes.push(q.note);
  const bounds = intersect(placement.source, { x: 0, y: 0, w: service.width, h: service.height });
  const imageInt = (outBox: Rect): Rect => {
    const f = canvasToImage(placement, toCanvas(outBox));
    const x0 = Math.max(bounds.x, Math.round(f.x)), y0 = Math.max(bounds.y, Math.round(f.y));
    const x1 = Math.min(bounds.x + bounds.w, Math.round(f.x + f.w)), y1 = Math.min(bounds.y + bounds.h, Math.round(f.y + f.h));
    return { x: x0, y: y0, w: Math.max(1, x1 - x0), h: Math.max(1, y1 - y0) };
  };

  let stitch: StitchRecipe | undefined;
  if (canRequestRegion(service) && canRequestExactSize(service)) stitch = serverScaled(service, box, imageInt, format, quality, notes);
  if (!stitch && canRequestRegion(service)) stitch = nativeThenResample(service, box, imageInt(box), format, quality, notes);
  if (!stitch) stitch = fromLevel0(service, box, imageInt(box), Math.max(kx, ky), format, quality, notes);

  return {
    // The placement is part of the key: one image painted on two canvases gives different crops for one output box.
    key: stableId([service.base, s, placement.target.x, placement.target.y, placement.target.w, placement.target.h, placement.source.x, placement.source.y, placement.source.w, placement.source.h, box.x, box.y, box.w, box.h, format]),
    service: { id: service.id, base: service.base, version: service.version, level: service.level },
    scale: s,
    outputBox: box,
    canvasRegion: toCanvas(box),
    imageRegion,
    format,
    quality,
    stitch,
    notes,
  };
}

type ToImage = (outBox: Rect) => Rect;

function serverScaled(service: ImageService, box: Rect, imageInt: ToImage, format: string, quality: string, notes: string[]): StitchRecipe | undefined {
  const cells = splitWithinLimits(box.w, box.h, service);
  const pieces: Piece[] = [];
  for (const cell of cells) {
    const region = imageInt({ x: box.x + cell.x, y: box.y + cell.y, w: cell.w, h: cell.h });
    const upscale = cell.w > region.w || cell.h > region.h;
    if (upscale && !canUpscale(service)) return undefined;
    const size: SizeParam = { kind: 'wh', width: cell.w, height: cell.h, upscale };
    pieces.push({
      url: imageRequestUrl(service.base, service.version, { region, size, quality, format }),
      left: cell.x, top: cell.y, width: cell.w, height: cell.h,
      expectWidth: cell.w, expectHeight: cell.h, tolerance: 0,
    });
  }
  if (pieces.length > 1) notes.push(`split into ${pieces.length} requests to respect the server's size limits`);
  if (pieces.some((p) => /\/\^/.test(p.url))) notes.push('upscaled by the server');
  return { mosaicWidth: box.w, mosaicHeight: box.h, pieces, extract: { x: 0, y: 0, w: box.w, h: box.h } };
}

function nativeThenResample(service: ImageService, box: Rect, region: Rect, format: string, quality: string, notes: string[]): StitchRecipe {
  const cells = splitWithinLimits(region.w, region.h, service);
  const pieces: Piece[] = cells.map((cell) => {
    const r = { x: region.x + cell.x, y: region.y + cell.y, w: cell.w, h: cell.h };
    // `max` (3.0) / `full` (2.1) is the region at native size (Image API 3.0 §4.2; 2.1 §4.2); within limits by construction.
    const size: SizeParam = { kind: 'max' };
    return {
      url: imageRequestUrl(service.base, service.version, { region: r, size, quality, format }),
      left: cell.x, top: cell.y, width: cell.w, height: cell.h,
      expectWidth: cell.w, expectHeight: cell.h, tolerance: 0,
    };
  });
  notes.push('fetched at native size and resampled locally');
  if (pieces.length > 1) notes.push(`split into ${pieces.length} requests to respect the server's size limits`);
  return {
    mosaicWidth: region.w,
    mosaicHeight: region.h,
    pieces,
    extract: { x: 0, y: 0, w: region.w, h: region.h },
    ...(region.w !== box.w || region.h !== box.h ? { resize: { width: box.w, height: box.h } } : {}),
  };
}

function fromLevel0(service: ImageService, box: Rect, region: Rect, k: number, format: string, quality: string, notes: string[]): StitchRecipe {
  const choice = chooseScaleFactor(service.tiles, k);
  if (choice) {
    const { tile, sf } = choice;
    const tiles = tilesCovering(service, tile, sf, region, format, quality);
    const ox = Math.min(...tiles.map((t) => t.region.x / sf));
    const oy = Math.min(...tiles.map((t) => t.region.y / sf));
    const pieces: Piece[] = tiles.map((t) => ({
      url: t.url,
      ...(t.fallbackUrl ? { fallbackUrl: t.fallbackUrl } : {}),
      left: t.region.x / sf - ox, top: t.region.y / sf - oy, width: t.width, height: t.height,
      expectWidth: t.width, expectHeight: t.height, tolerance: 1,
    }));
    const mosaicWidth = Math.max(...pieces.map((p) => p.left + p.width));
    const mosaicHeight = Math.max(...pieces.map((p) => p.top + p.height));
    const ex0 = Math.max(0, Math.floor(region.x / sf - ox)), ey0 = Math.max(0, Math.floor(region.y / sf - oy));
    const ex1 = Math.min(mosaicWidth, Math.ceil((region.x + region.w) / sf - ox));
    const ey1 = Math.min(mosaicHeight, Math.ceil((region.y + region.h) / sf - oy));
    const extract = { x: ex0, y: ey0, w: Math.max(1, ex1 - ex0), h: Math.max(1, ey1 - ey0) };
    notes.push(`level 0: ${pieces.length} tile(s) of ${tile.width}×${tile.height} at scale factor ${sf}`);
    return finish(mosaicWidth, mosaicHeight, pieces, extract, box, notes);
  }
  const v3 = service.version === 3;
  let size = service.sizes.find((sz) => sz.width / service.width >= k * (1 - 1e-9)) ?? service.sizes[service.sizes.length - 1];
  let sizeParam: SizeParam;
  if (size) {
    sizeParam = v3 ? { kind: 'wh', width: size.width, height: size.height } : { kind: 'w', width: size.width };
    notes.push(`level 0: full image at listed size ${size.width}×${size.height}`);
  } else {
    size = { width: service.width, height: service.height };
    if (service.maxWidth !== undefined && (size.width > service.maxWidth || size.height > (service.maxHeight ?? Infinity))) {
      throw new PlanError('level-0 service offers no tiles or sizes, and its full size exceeds its limits');
    }
    sizeParam = { kind: 'max' };
    notes.push('level 0: full image at full size');
  }
  const fx = size.width / service.width, fy = size.height / service.height;
  const url = imageRequestUrl(service.base, service.version, { region: 'full', size: sizeParam, quality, format });
  const pieces: Piece[] = [{ url, left: 0, top: 0, width: size.width, height: size.height, expectWidth: size.width, expectHeight: size.height, tolerance: 1 }];
  const ex0 = Math.floor(region.x * fx), ey0 = Math.floor(region.y * fy);
  const ex1 = Math.min(size.width, Math.ceil((region.x + region.w) * fx)), ey1 = Math.min(size.height, Math.ceil((region.y + region.h) * fy));
  return finish(size.width, size.height, pieces, { x: ex0, y: ey0, w: Math.max(1, ex1 - ex0), h: Math.max(1, ey1 - ey0) }, box, notes);
}

function finish(mw: number, mh: number, pieces: Piece[], extract: Rect, box: Rect, notes: string[]): StitchRecipe {
  const resize = extract.w !== box.w || extract.h !== box.h ? { width: box.w, height: box.h } : undefined;
  if (resize) notes.push('resampled locally');
  return { mosaicWidth: mw, mosaicHeight: mh, pieces, extract, ...(resize ? { resize } : {}) };
}
