/**
 * Difference hash ("dHash", N. Krawetz, "Kind of Like That", Hacker Factor blog, 2013; from memory):
 * 1. reduce to grey; 2. shrink to 9×8 pixels (here: exact area averaging, so the
 *    result does not depend on an image library's resampler);
 * 3. for each row compare each pixel with its right neighbour: bit = left < right;
 * 4. the 64 bits, row by row, most significant first, as 16 hex digits.
 * Pure: takes raw RGB pixels.
 */
export function dHash(rgb: Uint8Array, width: number, height: number): { hash: string; textured: boolean } {
  const grid = shrinkGrey(rgb, width, height, 9, 8);
  let hi = 0, lo = 0;
  for (let y = 0; y < 8; y++) {
    for (let x = 0; x < 8; x++) {
      const bit = grid[y * 9 + x] < grid[y * 9 + x + 1] ? 1 : 0;
      const n = y * 8 + x;
      if (n < 32) hi = (hi << 1) | bit;
      else lo = (lo << 1) | bit;
    }
  }
  // "Textured": the 9×8 grey grid varies by more than 2 levels (standard deviation). Flat grounds
  // hash to all zeros and would all look alike; their hashes say nothing about the picture.
  const mean = grid.reduce((a, b) => a + b, 0) / grid.length;
  const sd = Math.sqrt(grid.reduce((a, b) => a + (b - mean) ** 2, 0) / grid.length);
  return { hash: hex32(hi) + hex32(lo), textured: sd > 2 };
}

function hex32(n: number): string {
  return (n >>> 0).toString(16).padStart(8, '0');
}

/** Rec. ITU-R BT.601 luma weights (0.299, 0.587, 0.114), area-averaged onto a gw×gh grid. */
export function shrinkGrey(rgb: Uint8Array, width: number, height: number, gw: number, gh: number): Float64Array {
  const out = new Float64Array(gw * gh);
  const area = new Float64Array(gw * gh);
  for (let y = 0; y < height; y++) {
    const y0 = (y * gh) / height, y1 = ((y + 1) * gh) / height;
    for (let x = 0; x < width; x++) {
      const i = (y * width + x) * 3;
      const g = 0.299 * rgb[i] + 0.587 * rgb[i + 1] + 0.114 * rgb[i + 2];
      const x0 = (x * gw) / width, x1 = ((x + 1) * gw) / width;
      for (let cy = Math.floor(y0); cy < Math.min(gh, Math.ceil(y1)); cy++) {
        const wy = Math.min(y1, cy + 1) - Math.max(y0, cy);
        if (wy <= 0) continue;
        for (let cx = Math.floor(x0); cx < Math.min(gw, Math.ceil(x1)); cx++) {
          const wx = Math.min(x1, cx + 1) - Math.max(x0, cx);
          if (wx <= 0) continue;
          out[cy * gw + cx] += g * wx * wy;
          area[cy * gw + cx] += wx * wy;
        }
      }
    }
  }
  for (let k = 0; k < out.length; k++) out[k] /= area[k];
  return out;
}

const POP = new Uint8Array(256).map((_, i) => {
  let c = 0;
  for (let v = i; v; v >>= 1) c += v & 1;
  return c;
});

export function hammingHex(a: string, b: string): number {
  let d = 0;
  for (let i = 0; i < 16; i += 2) d += POP[parseInt(a.slice(i, i + 2), 16) ^ parseInt(b.slice(i, i + 2), 16)];
  return d;
}
