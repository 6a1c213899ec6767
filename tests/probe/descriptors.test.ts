import { describe, expect, it } from 'vitest';
import { lbpCodes, lbpHistogram, lbpBins } from '../../src/probe/lbp.ts';
import { glcm, glcmProperties } from '../../src/probe/glcm.ts';
import { averagePrecision, leaveOneOutRelevance, precisionAt } from '../../src/probe/retrieval.ts';

// Check values from ../shared/texture-and-metadata-facts.md; each block names the source the facts file gives.
const img = (rows: number[][]) => ({ width: rows[0].length, height: rows.length, data: rows.flat() });
const grid = (codes: Int32Array, w: number) => Array.from({ length: codes.length / w }, (_, r) => [...codes.slice(r * w, r * w + w)]);

describe('local binary patterns', () => {
  // CHECK VALUE A-1: scikit-image TestLBP reference image, P=8, R=1 (tests/skimage2/feature/test_texture.py)
  const A1 = img([
    [255, 6, 255, 0, 141, 0],
    [48, 250, 204, 166, 223, 63],
    [8, 0, 159, 50, 255, 30],
    [167, 255, 63, 40, 128, 255],
    [0, 255, 30, 34, 255, 24],
    [146, 241, 255, 0, 189, 126],
  ]);
  it('default codes equal the published array (A-1)', () => {
    expect(grid(lbpCodes(A1, 8, 1, 'default'), 6)).toEqual([
      [0, 251, 0, 255, 96, 255], [143, 0, 20, 153, 64, 56], [238, 255, 12, 191, 0, 252],
      [129, 64, 62, 159, 199, 0], [255, 4, 255, 175, 0, 254], [3, 5, 0, 255, 4, 24],
    ]);
  });
  it('riu2 codes (scikit-image "uniform", P+2 bins) equal the published array (A-1)', () => {
    expect(grid(lbpCodes(A1, 8, 1, 'riu2'), 6)).toEqual([
      [0, 7, 0, 8, 2, 8], [5, 0, 9, 9, 1, 3], [9, 8, 2, 7, 0, 6], [2, 1, 5, 6, 5, 0], [8, 1, 8, 9, 0, 7], [2, 9, 0, 8, 1, 2],
    ]);
    expect(lbpBins('riu2', 8)).toBe(10);
    // A-2 (DERIVED): the riu2 histogram of the whole array
    expect([...lbpHistogram(A1, 8, 1, 'riu2')].map((v) => Math.round(v * 36))).toEqual([7, 4, 5, 1, 0, 3, 2, 3, 6, 5]);
  });
  it('u2 codes in scikit-image "nri_uniform" bin order equal the published array (A-1)', () => {
    expect(grid(lbpCodes(A1, 8, 1, 'u2'), 6)).toEqual([
      [0, 54, 0, 57, 12, 57], [34, 0, 58, 58, 3, 22], [58, 57, 15, 50, 0, 47], [10, 3, 40, 42, 35, 0], [57, 7, 57, 58, 0, 56], [9, 58, 0, 57, 7, 14],
    ]);
    expect([lbpBins('u2', 8), lbpBins('u2', 16), lbpBins('riu2', 16)]).toEqual([59, 243, 18]);
  });
  it('A-2: a 3×3 patch, centre code 167 and non-uniform; riu2 commutes with a quarter turn', () => {
    const patch = img([[6, 11, 14], [9, 10, 10], [19, 0, 22]]);
    expect(lbpCodes(patch, 8, 1, 'default')[4]).toBe(167);
    expect(lbpCodes(patch, 8, 1, 'riu2')[4]).toBe(9);
    // rot90 counter-clockwise: out[r][c] = in[c][w-1-r]
    const rot = (rows: number[][]) => rows[0].map((_, r) => rows.map((row) => row[rows[0].length - 1 - r]));
    const rows = grid(new Int32Array(A1.data as number[]), 6);
    expect(grid(lbpCodes(img(rot(rows)), 8, 1, 'riu2'), 6)).toEqual(rot(grid(lbpCodes(A1, 8, 1, 'riu2'), 6)));
  });
});

describe('grey-level co-occurrence', () => {
  const H = img([[0, 0, 1, 1], [0, 0, 1, 1], [0, 2, 2, 2], [2, 2, 3, 3]]);
  const rows = (m: Float64Array) => [0, 1, 2, 3].map((i) => [...m.slice(i * 4, i * 4 + 4)]);
  it('B-1: scikit-image graycomatrix docstring matrices, four angles', () => {
    expect(rows(glcm(H, 4, 1, 0))).toEqual([[2, 2, 1, 0], [0, 2, 0, 0], [0, 0, 3, 1], [0, 0, 0, 1]]);
    expect(rows(glcm(H, 4, 1, Math.PI / 4))).toEqual([[1, 1, 3, 0], [0, 1, 1, 0], [0, 0, 0, 2], [0, 0, 0, 0]]);
    expect(rows(glcm(H, 4, 1, Math.PI / 2))).toEqual([[3, 0, 2, 0], [0, 2, 2, 0], [0, 0, 1, 2], [0, 0, 0, 0]]);
    expect(rows(glcm(H, 4, 1, (3 * Math.PI) / 4))).toEqual([[2, 0, 0, 0], [1, 1, 2, 0], [0, 0, 2, 1], [0, 0, 0, 0]]);
    expect(rows(glcm(H, 4, 1, Math.PI / 2, { symmetric: true }))).toEqual([[6, 0, 2, 0], [0, 4, 2, 0], [2, 2, 2, 2], [0, 0, 2, 0]]);
  });
  it('B-2: Haralick\'s symmetric 45° and 135° matrices are scikit-image\'s 3π/4 and π/4', () => {
    expect(rows(glcm(H, 4, 1, (3 * Math.PI) / 4, { symmetric: true }))).toEqual([[4, 1, 0, 0], [1, 2, 2, 0], [0, 2, 4, 1], [0, 0, 1, 0]]);
    expect(rows(glcm(H, 4, 1, Math.PI / 4, { symmetric: true }))).toEqual([[2, 1, 3, 0], [1, 2, 1, 0], [3, 1, 0, 2], [0, 0, 2, 0]]);
  });
  it('B-3/B-4: properties, symmetric and normed', () => {
    const p = (d: number, a: number) => glcmProperties(glcm(H, 4, d, a, { symmetric: true, normed: true }), 4);
    const close = (x: number, y: number) => expect(x).toBeCloseTo(y, 7);
    close(p(1, 0).contrast, 0.58333333);
    close(p(1, Math.PI / 2).contrast, 1);
    close(p(2, 0).contrast, 1.25);
    close(p(2, Math.PI / 2).contrast, 2.75);
    const a = p(1, 0);
    close(a.homogeneity, 0.80833333);
    close(a.energy, 0.38188131);
    close(a.asm, 0.14583333);
    close(a.correlation, 0.71953255);
    close(a.dissimilarity, 0.41666667);
    close(p(2, 0).correlation, 0.4117647);
    close(p(2, Math.PI / 2).correlation, -0.29411765);
    close(p(1, Math.PI / 4).contrast, 1.77777778);
    close(p(2, Math.PI / 4).contrast, 1.77777778); // diagonal at d=2 rounds to offset (1,1): scikit-image#6424
    close(p(1, (3 * Math.PI) / 4).contrast, 0.44444444);
  });
  it('edge cases of scikit-image TestGLCM: distance past the image, a constant image', () => {
    expect([...glcm(H, 4, 10, 0, { normed: true })].every((v) => v === 0)).toBe(true);
    expect(glcmProperties(glcm(img([[2, 2], [2, 2]]), 4, 1, 0, { symmetric: true, normed: true }), 4)).toEqual({ contrast: 0, dissimilarity: 0, homogeneity: 1, asm: 1, energy: 1, correlation: 1 });
  });
});

describe('retrieval scores', () => {
  it('C-2: average precision of the scikit-learn docstring example is 5/6', () => {
    // ranked by score 0.8 (rel), 0.4 (not), 0.35 (rel), 0.1 (not): sklearn average_precision_score docstring
    expect(averagePrecision([1, 0, 1, 0])).toBeCloseTo(5 / 6, 12);
  });
  it('C-3: leave-one-out kNN on 1-D features: mean P@1 1/2, mean P@2 5/12, MAP 79/120 (DERIVED)', () => {
    const x = [0.0, 0.3, 1.15, 1.0, 1.6, 2.5];
    const labels = ['A', 'A', 'A', 'B', 'B', 'B'];
    const rel = leaveOneOutRelevance(6, (a, b) => Math.abs(x[a] - x[b]), labels);
    expect(rel[2]).toEqual([0, 0, 1, 1, 0]);
    const mean = (f: (r: number[]) => number) => rel.reduce((s, r) => s + f(r), 0) / rel.length;
    expect(mean((r) => precisionAt(r, 1))).toBeCloseTo(1 / 2, 12);
    expect(mean((r) => precisionAt(r, 2))).toBeCloseTo(5 / 12, 12);
    expect(mean((r) => averagePrecision(r))).toBeCloseTo(79 / 120, 12);
  });
});
