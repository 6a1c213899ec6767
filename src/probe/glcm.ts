/**
 * Grey-level co-occurrence matrices and their properties (Haralick, Shanmugam,
 * Dinstein, IEEE Trans. SMC-3(6), 1973), pure. Conventions pinned to scikit-image's
 * `graycomatrix`/`graycoprops`: for angle θ and distance d the pair of pixel (r, c) is
 * (r + round(sin θ·d), c + round(cos θ·d)), rounding half away from zero (so θ = π/4
 * looks down-right, and a diagonal at d = 2 is offset (1, 1)); pairs outside the image
 * are skipped; `symmetric` adds the transpose; `normed` divides by the total.
 */
import type { GreyImage } from './lbp.ts';

const roundAway = (v: number) => Math.sign(v) * Math.round(Math.abs(v));

/** The levels×levels matrix (row-major) for one distance and angle. Grey values must be integers in [0, levels). */
export function glcm(img: GreyImage, levels: number, distance: number, angle: number, opts: { symmetric?: boolean; normed?: boolean } = {}): Float64Array {
  const dr = roundAway(Math.sin(angle) * distance), dc = roundAway(Math.cos(angle) * distance);
  const m = new Float64Array(levels * levels);
  const { width: w, height: h, data } = img;
  for (let r = 0; r < h; r++) {
    const r2 = r + dr;
    if (r2 < 0 || r2 >= h) continue;
    for (let c = 0; c < w; c++) {
      const c2 = c + dc;
      if (c2 < 0 || c2 >= w) continue;
      const i = data[r * w + c], j = data[r2 * w + c2];
      if (!Number.isInteger(i) || !Number.isInteger(j) || i < 0 || j < 0 || i >= levels || j >= levels) throw new RangeError(`grey levels must be integers in [0, ${levels})`);
      m[i * levels + j]++;
    }
  }
  if (opts.symmetric) for (let i = 0; i < levels; i++) for (let j = i + 1; j < levels; j++) {
    const s = m[i * levels + j] + m[j * levels + i];
    m[i * levels + j] = s;
    m[j * levels + i] = s;
  }
  if (opts.symmetric) for (let i = 0; i < levels; i++) m[i * levels + i] *= 2;
  if (opts.normed) {
    const total = m.reduce((a, b) => a + b, 0);
    if (total > 0) for (let k = 0; k < m.length; k++) m[k] /= total;
  }
  return m;
}

export interface GlcmProperties {
  contrast: number;
  dissimilarity: number;
  homogeneity: number;
  asm: number;
  energy: number;
  correlation: number;
}

/**
 * Properties of a matrix, renormalised to sum 1 first: contrast Σp(i−j)², dissimilarity
 * Σp|i−j|, homogeneity Σp/(1+(i−j)²), ASM Σp², energy √ASM, correlation
 * Σp(i−μi)(j−μj)/(σiσj), defined as 1 when σi or σj < 1e-15 (scikit-image's rule).
 */
export function glcmProperties(matrix: ArrayLike<number>, levels: number): GlcmProperties {
  let total = 0;
  for (let k = 0; k < levels * levels; k++) total += matrix[k];
  const p = (i: number, j: number) => (total > 0 ? matrix[i * levels + j] / total : 0);
  let contrast = 0, dissimilarity = 0, homogeneity = 0, asm = 0, mi = 0, mj = 0;
  for (let i = 0; i < levels; i++) for (let j = 0; j < levels; j++) {
    const v = p(i, j), d = i - j;
    contrast += v * d * d;
    dissimilarity += v * Math.abs(d);
    homogeneity += v / (1 + d * d);
    asm += v * v;
    mi += i * v;
    mj += j * v;
  }
  let vi = 0, vj = 0, cov = 0;
  for (let i = 0; i < levels; i++) for (let j = 0; j < levels; j++) {
    const v = p(i, j);
    vi += v * (i - mi) ** 2;
    vj += v * (j - mj) ** 2;
    cov += v * (i - mi) * (j - mj);
  }
  const si = Math.sqrt(vi), sj = Math.sqrt(vj);
  const correlation = si < 1e-15 || sj < 1e-15 ? 1 : cov / (si * sj);
  return { contrast, dissimilarity, homogeneity, asm, energy: Math.sqrt(asm), correlation };
}
