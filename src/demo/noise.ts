/** Deterministic value noise for the invented demo textures: integer hashing, no global state. */

/** A 32-bit integer hash of two lattice coordinates and a seed (a multiply-xorshift mix, common practice). */
export function latticeHash(ix: number, iy: number, seed: number): number {
  let h = (ix * 374761393 + iy * 668265263 + seed * 2246822519) | 0;
  h = Math.imul(h ^ (h >>> 13), 1274126177);
  h ^= h >>> 16;
  return (h >>> 0) / 4294967296;
}

const smooth = (t: number) => t * t * (3 - 2 * t);

/** Value noise in [0,1) at (x, y), lattice spacing 1. */
export function valueNoise(x: number, y: number, seed: number): number {
  const x0 = Math.floor(x), y0 = Math.floor(y);
  const tx = smooth(x - x0), ty = smooth(y - y0);
  const a = latticeHash(x0, y0, seed), b = latticeHash(x0 + 1, y0, seed);
  const c = latticeHash(x0, y0 + 1, seed), d = latticeHash(x0 + 1, y0 + 1, seed);
  return (a + (b - a) * tx) * (1 - ty) + (c + (d - c) * tx) * ty;
}

/** Fractal sum of `octaves` noise layers, each twice the frequency and half the amplitude; in [0,1). */
export function fractalNoise(x: number, y: number, seed: number, octaves = 4): number {
  let sum = 0, amp = 0.5, norm = 0, f = 1;
  for (let o = 0; o < octaves; o++) {
    sum += amp * valueNoise(x * f, y * f, seed + o * 1013);
    norm += amp;
    amp *= 0.5;
    f *= 2;
  }
  return sum / norm;
}
