import { hsvHistogram } from './colour.ts';
import { glcm, glcmProperties } from './glcm.ts';
import { lbpHistogram } from './lbp.ts';

/** The descriptors the probe compares, by name. Histograms are compared by chi-squared too. */
export interface PatchDescriptors {
  /** LBP P=8, R=1, rotation-invariant uniform (10 bins). */
  lbp8: Float64Array;
  /** LBP P=16, R=2, rotation-invariant uniform (18 bins). */
  lbp16: Float64Array;
  /** GLCM at 8 grey levels, distances 1 and 2, angles 0, π/4, π/2, 3π/4: contrast, dissimilarity, homogeneity, energy, correlation (40). */
  glcm: Float64Array;
  /** HSV colour histogram (72 bins). */
  colour: Float64Array;
}

export const DESCRIPTORS = ['lbp8', 'lbp16', 'glcm', 'colour'] as const;
export type DescriptorName = (typeof DESCRIPTORS)[number];
export const HISTOGRAM_DESCRIPTORS: readonly DescriptorName[] = ['lbp8', 'lbp16', 'colour'];

/** Grey by ITU-R BT.601 luma, rounded to 8 bits. */
export function toGrey(rgb: { width: number; height: number; data: ArrayLike<number> }): { width: number; height: number; data: Uint8Array } {
  const n = rgb.width * rgb.height;
  const data = new Uint8Array(n);
  for (let i = 0; i < n; i++) data[i] = Math.round(0.299 * rgb.data[i * 3] + 0.587 * rgb.data[i * 3 + 1] + 0.114 * rgb.data[i * 3 + 2]);
  return { width: rgb.width, height: rgb.height, data };
}

/** All descriptors of one RGB patch (pure). */
export function describePatch(rgb: { width: number; height: number; data: ArrayLike<number> }): PatchDescriptors {
  const grey = toGrey(rgb);
  const q = { width: grey.width, height: grey.height, data: grey.data.map((v) => v >> 5) };
  const g: number[] = [];
  for (const d of [1, 2]) for (const a of [0, Math.PI / 4, Math.PI / 2, (3 * Math.PI) / 4]) {
    const p = glcmProperties(glcm(q, 8, d, a, { symmetric: true, normed: true }), 8);
    g.push(p.contrast, p.dissimilarity, p.homogeneity, p.energy, p.correlation);
  }
  return { lbp8: lbpHistogram(grey, 8, 1, 'riu2'), lbp16: lbpHistogram(grey, 16, 2, 'riu2'), glcm: Float64Array.from(g), colour: hsvHistogram(rgb) };
}
