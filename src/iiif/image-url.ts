import type { Rect } from '../geometry/rect.ts';
import type { ImageApiVersion } from './image-service.ts';

/** The size parameter of an image request. */
export type SizeParam =
  | { kind: 'wh'; width: number; height: number; upscale?: boolean }
  | { kind: 'w'; width: number; upscale?: boolean }
  | { kind: 'max' };

export interface ImageRequest {
  /** Integer pixel region, or the whole image. */
  region: Rect | 'full';
  size: SizeParam;
  quality: string;
  format: string;
}

/**
 * Percent-encodes an identifier for use in a URI path (Image API 3.0 §9, 2.1 §9):
 * `/ ? # [ ] @ %` and every non-ASCII character are encoded; `:` is kept.
 * Example (Image API 3.0 §9): `ark:/12025/654xz321` → `ark:%2F12025%2F654xz321`.
 */
export function encodeIdentifier(identifier: string): string {
  let out = '';
  for (const ch of identifier) {
    if ('/?#[]@%'.includes(ch) || ch.codePointAt(0)! > 0x7e || ch.codePointAt(0)! < 0x21) out += encodeURIComponent(ch);
    else out += ch;
  }
  return out;
}

/** Base URI from a server prefix and an identifier: `{scheme}://{server}{/prefix}/{identifier}` (Image API 3.0 §2). */
export function serviceBase(prefix: string, identifier: string): string {
  return `${prefix.replace(/\/+$/, '')}/${encodeIdentifier(identifier)}`;
}

function assertPixelInt(n: number, what: string): void {
  if (!Number.isInteger(n) || n < 0) throw new RangeError(`${what} must be a non-negative integer (Image API 3.0 §4), got ${n}`);
}

/** Region parameter: `full` or `x,y,w,h` in integer pixels (Image API 3.0 §4.1, §4.8 canonical form). */
export function formatRegion(region: Rect | 'full'): string {
  if (region === 'full') return 'full';
  for (const [k, v] of Object.entries(region)) assertPixelInt(v, `region ${k}`);
  if (region.w === 0 || region.h === 0) throw new RangeError('region width and height must be positive (Image API 3.0 §4.1)');
  return `${region.x},${region.y},${region.w},${region.h}`;
}

/**
 * Size parameter. Version 3 canonical is `w,h` (with `^` when upscaling);
 * version 2 has no `^`, `w,` keeps the aspect ratio and `max` is spelled `full` where `max` is not supported
 * (Image API 3.0 §4.2, §4.8; 2.1 §4.2, §4.7).
 */
export function formatSize(version: ImageApiVersion, size: SizeParam): string {
  switch (size.kind) {
    case 'max':
      return version === 3 ? 'max' : 'full';
    case 'w':
      assertPixelInt(size.width, 'size width');
      return `${version === 3 && size.upscale ? '^' : ''}${size.width},`;
    case 'wh':
      assertPixelInt(size.width, 'size width');
      assertPixelInt(size.height, 'size height');
      return `${version === 3 && size.upscale ? '^' : ''}${size.width},${size.height}`;
  }
}

/**
 * Builds `{base}/{region}/{size}/{rotation}/{quality}.{format}`. The base is
 * used as published, so ids carrying a query string (`…/server?IIIF=img.tif`)
 * keep working: the parameters continue the query value, which is how such servers read them.
 */
export function imageRequestUrl(base: string, version: ImageApiVersion, req: ImageRequest): string {
  const b = base.replace(/\/+$/, '');
  return `${b}/${formatRegion(req.region)}/${formatSize(version, req.size)}/0/${req.quality}.${req.format}`;
}

export function infoJsonUrl(base: string): string {
  return `${base.replace(/\/+$/, '')}/info.json`;
}
