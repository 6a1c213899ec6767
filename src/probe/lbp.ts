/**
 * Local Binary Patterns (Ojala, Pietikäinen, Mäenpää, IEEE TPAMI 24(7), 2002) over
 * a grey image, pure. Conventions pinned to scikit-image's `local_binary_pattern`
 * so results can be compared with it: neighbour p of P sits at row offset
 * −R·sin(2πp/P) and column offset R·cos(2πp/P), both rounded to 5 decimals (p = 0 is
 * the right neighbour, counter-clockwise as displayed); samples off pixel centres are
 * interpolated bilinearly, samples outside the image read 0; a bit is set when the
 * neighbour is ≥ the centre; every pixel, borders included, gets a code.
 */

export type LbpMethod = 'default' | 'riu2' | 'u2';

export interface GreyImage {
  width: number;
  height: number;
  /** Row-major grey levels. */
  data: ArrayLike<number>;
}

/** Number of histogram bins of each method: 2^P; P + 2 (rotation-invariant uniform); P(P−1) + 3 (uniform). */
export function lbpBins(method: LbpMethod, P: number): number {
  return method === 'default' ? 2 ** P : method === 'riu2' ? P + 2 : P * (P - 1) + 3;
}

const round5 = (v: number) => Math.round(v * 1e5) / 1e5;

/**
 * The code image. `riu2`: the number of set bits when the pattern has at most two
 * circular 0/1 transitions, else P + 1. `u2`: uniform patterns by number of ones n and
 * the position of their run (all zeros 0; 1 + (n−1)·P + rotation; all ones P(P−1)+1;
 * non-uniform P(P−1)+2), scikit-image's `nri_uniform` bin order.
 */
export function lbpCodes(img: GreyImage, P: number, R: number, method: LbpMethod): Int32Array {
  const rr = Float64Array.from({ length: P }, (_, p) => round5(-R * Math.sin((2 * Math.PI * p) / P)));
  const cc = Float64Array.from({ length: P }, (_, p) => round5(R * Math.cos((2 * Math.PI * p) / P)));
  const { width: w, height: h } = img;
  const n = w * h;
  // The image inside a frame of zeros as wide as the radius reaches: every sample then lies
  // inside the array, and samples outside the image read 0 as the method says.
  const q = Math.ceil(R) + 1;
  const W = w + 2 * q;
  const data = new Float64Array(W * (h + 2 * q));
  for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) data[(r + q) * W + c + q] = img.data[r * w + c]!;
  // Per neighbour: its offset in the framed array, the neighbours of its bilinear cell, and
  // fast weights from the offset's fractions. A sample within 1e-9 of its centre is recomputed
  // by the reference formula (top row, bottom row, then between them, with the fractions taken
  // from r + rr[p] and c + cc[p] as a plain floor gives them), so every bit equals the reference's.
  const fr = Int32Array.from(rr, Math.floor), fc = Int32Array.from(cc, Math.floor);
  const off = new Int32Array(P), down = new Int32Array(P), right = new Int32Array(P);
  const w00 = new Float64Array(P), w01 = new Float64Array(P), w10 = new Float64Array(P), w11 = new Float64Array(P);
  for (let p = 0; p < P; p++) {
    off[p] = fr[p]! * W + fc[p]!;
    down[p] = rr[p] === fr[p] ? 0 : W;
    right[p] = cc[p] === fc[p] ? 0 : 1;
    const fy = rr[p]! - fr[p]!, fx = cc[p]! - fc[p]!;
    w00[p] = (1 - fy) * (1 - fx);
    w01[p] = (1 - fy) * fx;
    w10[p] = fy * (1 - fx);
    w11[p] = fy * fx;
  }
  const exact = (k: number, p: number, r: number, c: number, centre: number) => {
    const dr = r + rr[p]! - (r + fr[p]!), dc = c + cc[p]! - (c + fc[p]!);
    const d = down[p]!, g = right[p]!;
    return (1 - dr) * ((1 - dc) * data[k]! + dc * data[k + g]!) + dr * ((1 - dc) * data[k + d]! + dc * data[k + d + g]!) - centre;
  };
  const out = new Int32Array(n);
  const bits = new Uint8Array(P);
  for (let r = 0; r < h; r++) {
    for (let c = 0; c < w; c++) {
      const at = (r + q) * W + c + q;
      const centre = data[at]!;
      let code = 0, ones = 0, changes = 0, last = 0, first = 0;
      for (let p = 0; p < P; p++) {
        const k = at + off[p]!;
        const d = down[p]!, g = right[p]!;
        let diff = w00[p]! * data[k]! + w01[p]! * data[k + g]! + w10[p]! * data[k + d]! + w11[p]! * data[k + d + g]! - centre;
        if (diff < 1e-9 && diff > -1e-9) diff = exact(k, p, r, c, centre);
        const bit = diff >= 0 ? 1 : 0;
        code += bit << p;
        ones += bit;
        if (p === 0) first = bit;
        else changes += bit ^ last;
        last = bit;
        bits[p] = bit;
      }
      changes += last ^ first;
      const i = r * w + c;
      if (method === 'default') out[i] = code;
      else if (method === 'riu2') out[i] = changes <= 2 ? ones : P + 1;
      else if (changes > 2) out[i] = P * (P - 1) + 2;
      else if (ones === 0) out[i] = 0;
      else if (ones === P) out[i] = P * (P - 1) + 1;
      else {
        // the run of ones starts at the one whose predecessor (circularly) is a zero
        let start = 0;
        while (!(bits[start] === 1 && bits[(start + P - 1) % P] === 0)) start++;
        out[i] = 1 + (ones - 1) * P + ((P - start) % P);
      }
    }
  }
  return out;
}

/** Histogram of codes, normalised to sum 1 (all zeros for an empty image). */
export function lbpHistogram(img: GreyImage, P: number, R: number, method: LbpMethod): Float64Array {
  const codes = lbpCodes(img, P, R, method);
  const hist = new Float64Array(lbpBins(method, P));
  for (const v of codes) hist[v]++;
  if (codes.length) for (let i = 0; i < hist.length; i++) hist[i] /= codes.length;
  return hist;
}
