import { ImageError, SizeMismatch } from '../errors.ts';
import type { CropRequest } from '../plan/crop-request.ts';
import { RgbImage, blit, decodeRgb, extractRgb, resizeRgb } from '../image/pixels.ts';

/**
 * Assembles a crop from its fetched pieces per its stitch recipe: each piece is
 * decoded, resampled to its planned size when the server returned one within
 * tolerance, pasted into the mosaic (an exact raw-pixel copy, no re-encoding),
 * then the recipe's rectangle is extracted and resampled to the output size.
 * Throws when a body is missing or a size is outside tolerance.
 */
export async function stitchCrop(
  crop: CropRequest,
  bodyOf: (url: string) => Buffer | undefined,
  decode: (url: string, body: Buffer) => Promise<RgbImage> = (_url, body) => decodeRgb(body),
): Promise<{ image: RgbImage; resampledPieces: number }> {
  const { stitch } = crop;
  const mosaic: RgbImage = { width: stitch.mosaicWidth, height: stitch.mosaicHeight, data: Buffer.alloc(stitch.mosaicWidth * stitch.mosaicHeight * 3) };
  let resampledPieces = 0;
  for (const piece of stitch.pieces) {
    const body = bodyOf(piece.url);
    if (!body) throw new ImageError(`piece ${piece.url} is not available`);
    let img = await decode(piece.url, body);
    if (Math.abs(img.width - piece.expectWidth) > piece.tolerance || Math.abs(img.height - piece.expectHeight) > piece.tolerance) {
      throw new SizeMismatch(piece.url, piece.expectWidth, piece.expectHeight, img.width, img.height);
    }
    if (img.width !== piece.width || img.height !== piece.height) {
      img = await resizeRgb(img, piece.width, piece.height);
      resampledPieces++;
    }
    blit(mosaic, img, piece.left, piece.top);
  }
  const e = stitch.extract;
  let image = extractRgb(mosaic, e.x, e.y, e.w, e.h);
  if (stitch.resize) image = await resizeRgb(image, stitch.resize.width, stitch.resize.height);
  return { image, resampledPieces };
}


/**
 * A decoder that remembers the last `capacity` decoded pieces, so a level-0 tile
 * shared by several crops is decoded once, not once per crop.
 */
export function memoisedDecoder(capacity = 64): (url: string, body: Buffer) => Promise<RgbImage> {
  const cache = new Map<string, Promise<RgbImage>>();
  return (url, body) => {
    let p = cache.get(url);
    if (p) {
      cache.delete(url);
      cache.set(url, p);
      return p;
    }
    p = decodeRgb(body);
    cache.set(url, p);
    p.catch(() => cache.delete(url));
    if (cache.size > capacity) cache.delete(cache.keys().next().value as string);
    return p;
  };
}
