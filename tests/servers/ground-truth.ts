import sharp from 'sharp';
import type { RgbImage } from '../../src/image/pixels.ts';

/**
 * A synthetic source whose pixels say where they are: smooth waves of different
 * periods on each channel plus a slow ramp, so a patch taken one pixel off, or at
 * the wrong scale, differs visibly from its claimed region, while JPEG (which
 * loves smooth signals) stays close.
 */
export function truth(x: number, y: number, w: number, h: number): [number, number, number] {
  const c = (v: number) => Math.max(0, Math.min(255, Math.round(v)));
  return [
    c(128 + 60 * Math.sin((2 * Math.PI * x) / 41) + (0.1 * (x - w / 2) * 1200) / w),
    c(128 + 60 * Math.sin((2 * Math.PI * y) / 43) + (0.1 * (y - h / 2) * 900) / h),
    c(128 + 50 * Math.sin((2 * Math.PI * (x + y)) / 59)),
  ];
}

export function truthImage(w: number, h: number): RgbImage {
  const data = Buffer.alloc(w * h * 3);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) data.set(truth(x, y, w, h), (y * w + x) * 3);
  return { width: w, height: h, data };
}

/**
 * Mean absolute difference between a decoded patch and the source over the
 * patch's claimed image region (box-averaged when one patch pixel covers several source pixels).
 */
export async function patchError(png: Buffer, region: { x: number; y: number; w: number; h: number }, src: RgbImage): Promise<number> {
  const { data, info } = await sharp(png).removeAlpha().raw().toBuffer({ resolveWithObject: true });
  const sx = region.w / info.width, sy = region.h / info.height;
  let sum = 0;
  for (let j = 0; j < info.height; j++) {
    for (let i = 0; i < info.width; i++) {
      const x0 = region.x + i * sx, y0 = region.y + j * sy;
      const acc = [0, 0, 0];
      let n = 0;
      for (let yy = Math.floor(y0); yy < Math.ceil(y0 + sy - 1e-9); yy++) {
        for (let xx = Math.floor(x0); xx < Math.ceil(x0 + sx - 1e-9); xx++) {
          const k = (Math.min(src.height - 1, yy) * src.width + Math.min(src.width - 1, xx)) * 3;
          acc[0] += src.data[k];
          acc[1] += src.data[k + 1];
          acc[2] += src.data[k + 2];
          n++;
        }
      }
      const p = (j * info.width + i) * info.channels;
      for (let c = 0; c < 3; c++) sum += Math.abs(data[p + c] - acc[c] / n);
    }
  }
  return sum / (info.width * info.height * 3);
}
