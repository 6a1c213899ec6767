import { ImageError } from '../errors.ts';
import { headerSize } from './header-size.ts';

/** The largest image we decode (pixels); larger ones are refused as possible decompression bombs. */
export const DEFAULT_PIXEL_LIMIT = 100_000_000;

/**
 * Width and height from the header only (no decode): read directly for PNG,
 * JPEG, GIF and WebP, through the image library for other formats (loaded only
 * then). Refuses images that claim more pixels than `pixelLimit`.
 */
export async function imageSize(body: Buffer, pixelLimit = DEFAULT_PIXEL_LIMIT): Promise<{ width: number; height: number; format: string }> {
  let size = headerSize(body);
  if (!size) {
    const { default: sharp } = await import('sharp');
    const meta = await sharp(body, { limitInputPixels: pixelLimit }).metadata();
    size = { width: meta.width ?? 0, height: meta.height ?? 0, format: meta.format ?? 'unknown' };
  }
  if (!size.width || !size.height) throw new ImageError('the image has no readable size');
  if (size.width * size.height > pixelLimit) throw new ImageError(`the image claims ${size.width}×${size.height} pixels, more than the ${pixelLimit}-pixel limit`);
  return size;
}
