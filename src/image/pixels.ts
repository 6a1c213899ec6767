import sharp from 'sharp';
import { DEFAULT_PIXEL_LIMIT } from './image-size.ts';

/** Decoded pixels: 3-channel sRGB, row-major, 8 bits per channel. */
export interface RgbImage {
  width: number;
  height: number;
  data: Buffer;
}

/**
 * Decodes to 3-channel sRGB, optionally resized to exactly width×height.
 * Damaged data fails (sharp `failOn: 'truncated'`); sizes above the pixel limit fail.
 */
export async function decodeRgb(body: Buffer, resizeTo?: { width: number; height: number }, pixelLimit = DEFAULT_PIXEL_LIMIT): Promise<RgbImage> {
  let img = sharp(body, { limitInputPixels: pixelLimit, failOn: 'truncated' }).flatten({ background: '#ffffff' }).toColourspace('srgb');
  if (resizeTo) img = img.resize(resizeTo.width, resizeTo.height, { fit: 'fill', kernel: 'lanczos3' });
  const { data, info } = await img.raw().toBuffer({ resolveWithObject: true });
  return toRgb(data, info.width, info.height, info.channels);
}

/** Resamples raw RGB to exactly width×height (Lanczos-3, sharp's default kernel). */
export async function resizeRgb(src: RgbImage, width: number, height: number): Promise<RgbImage> {
  if (src.width === width && src.height === height) return src;
  const { data, info } = await sharp(src.data, { raw: { width: src.width, height: src.height, channels: 3 } })
    .resize(width, height, { fit: 'fill', kernel: 'lanczos3' })
    .raw()
    .toBuffer({ resolveWithObject: true });
  return toRgb(data, info.width, info.height, info.channels);
}

function toRgb(data: Buffer, width: number, height: number, channels: number): RgbImage {
  if (channels === 3) return { width, height, data };
  const out = Buffer.alloc(width * height * 3);
  for (let i = 0, n = width * height; i < n; i++) {
    if (channels === 1 || channels === 2) {
      const v = data[i * channels];
      out[i * 3] = v;
      out[i * 3 + 1] = v;
      out[i * 3 + 2] = v;
    } else {
      out[i * 3] = data[i * channels];
      out[i * 3 + 1] = data[i * channels + 1];
      out[i * 3 + 2] = data[i * channels + 2];
    }
  }
  return { width, height, data: out };
}

/** Copies a rectangle of `src` into `dst` at (left, top); parts outside `dst` are dropped. */
export function blit(dst: RgbImage, src: RgbImage, left: number, top: number): void {
  for (let y = 0; y < src.height; y++) {
    const dy = top + y;
    if (dy < 0 || dy >= dst.height) continue;
    const x0 = Math.max(0, -left), x1 = Math.min(src.width, dst.width - left);
    if (x1 <= x0) continue;
    src.data.copy(dst.data, (dy * dst.width + left + x0) * 3, (y * src.width + x0) * 3, (y * src.width + x1) * 3);
  }
}

export function extractRgb(src: RgbImage, x: number, y: number, w: number, h: number): RgbImage {
  if (x === 0 && y === 0 && w === src.width && h === src.height) return src;
  const out: RgbImage = { width: w, height: h, data: Buffer.alloc(w * h * 3) };
  blit(out, src, -x, -y);
  return out;
}

/** PNG with fixed settings and no metadata: same pixels, same bytes. */
export async function encodePng(img: RgbImage): Promise<Buffer> {
  return sharp(img.data, { raw: { width: img.width, height: img.height, channels: 3 } })
    .png({ compressionLevel: 6, adaptiveFiltering: false, palette: false })
    .toBuffer();
}

/** The image library's versions, for the card and for keys of cached cut results. */
export function imageLibraryVersions(): { sharp: string; libvips: string } {
  return { sharp: sharp.versions.sharp ?? 'unknown', libvips: sharp.versions.vips };
}
