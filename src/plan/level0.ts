import type { Rect } from '../geometry/rect.ts';
import type { ImageService, TileSpec } from '../iiif/image-service.ts';
import { imageRequestUrl } from '../iiif/image-url.ts';

/**
 * Picks the tile set and scale factor for a level-0 crop: the largest scale
 * factor whose resolution (1/sf of full) is still at least the one needed
 * (`imageScale` output pixels per image pixel). When even sf = 1 is coarser than
 * needed (upscaling), sf = 1 is used and the crop is resampled locally.
 */
export function chooseScaleFactor(tiles: readonly TileSpec[], imageScale: number): { tile: TileSpec; sf: number } | undefined {
  let best: { tile: TileSpec; sf: number } | undefined;
  for (const tile of tiles) {
    for (const sf of tile.scaleFactors) {
      const ok = 1 / sf >= imageScale * (1 - 1e-9);
      if (ok && (!best || sf > best.sf)) best = { tile, sf };
    }
  }
  if (best) return best;
  for (const tile of tiles) for (const sf of tile.scaleFactors) if (!best || sf < best.sf) best = { tile, sf };
  return best;
}

export interface TileRef {
  col: number;
  row: number;
  /** Region in full-image pixels. */
  region: Rect;
  /** Delivered size: ceil(region/sf). */
  width: number;
  height: number;
  url: string;
  /** The `x,y,w,h` spelling when `url` uses `full`. */
  fallbackUrl?: string;
}

/**
 * The tiles at scale factor `sf` that cover an image region, with their URLs
 * (Image API 3.0 implementation notes §3): xr = n·tw·s, wr = min(tw·s, W − xr),
 * ws = ceil(wr / s). A tile covering the whole image is written `full`, the
 * canonical form (§4.8), with the `x,y,w,h` spelling kept as a fallback because
 * some static pyramids store only that one; size is `w,h` for 3.0 and `w,` for 1.1 and 2.x
 * (Image API 2.1 Appendix A; 1.1 has no tile algorithm of its own, the same arithmetic applies).
 */
export function tilesCovering(service: ImageService, tile: TileSpec, sf: number, region: Rect, format = 'jpg', quality = service.version === 1 ? 'native' : 'default'): TileRef[] {
  const spanW = tile.width * sf, spanH = tile.height * sf;
  const c0 = Math.floor(region.x / spanW), r0 = Math.floor(region.y / spanH);
  const c1 = Math.ceil((region.x + region.w) / spanW) - 1, r1 = Math.ceil((region.y + region.h) / spanH) - 1;
  const out: TileRef[] = [];
  for (let row = r0; row <= r1; row++) {
    for (let col = c0; col <= c1; col++) {
      const xr = col * spanW, yr = row * spanH;
      if (xr >= service.width || yr >= service.height) continue;
      const wr = Math.min(spanW, service.width - xr), hr = Math.min(spanH, service.height - yr);
      const ws = Math.ceil(wr / sf), hs = Math.ceil(hr / sf);
      const size = service.version === 3 ? { kind: 'wh' as const, width: ws, height: hs } : { kind: 'w' as const, width: ws };
      const region = { x: xr, y: yr, w: wr, h: hr };
      const spelled = imageRequestUrl(service.base, service.version, { region, size, quality, format });
      const whole = xr === 0 && yr === 0 && wr === service.width && hr === service.height;
      const url = whole ? imageRequestUrl(service.base, service.version, { region: 'full', size, quality, format }) : spelled;
      out.push({ col, row, region, width: ws, height: hs, url, ...(whole ? { fallbackUrl: spelled } : {}) });
    }
  }
  return out;
}
