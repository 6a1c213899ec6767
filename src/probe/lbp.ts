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

function sample(img: GreyImage, r: number, c: number): number {
  const { width: w, height: h, data } = img;
  const at = (y: number, x: number) => (y < 0 || y >= h || x < 0 || x >= w ? 0 : data[y * w + x]);
  const r0 = Math.floor(r), c0 = Math.floor(c), r1 = Math.ceil(r), c1 = Math.ceil(c);
  const dr = r - r0, dc = c - c0;
  const top = (1 - dc) * at(r0, c0) + dc * at(r0, c1);
  const bottom = (1 - dc) * at(r1, c0) + dc * at(r1, c1);
  return (1 - dr) * top + dr * bottom;
}

/**
 * The code image. `riu2`: the number of set bits when the pattern has at most two
 * circular 0/1 transitions, else P + 1. `u2`: uniform patterns by number of ones n and
 * the position of their run (all zeros 0; 1 + (n−1)·P + rotation; all ones P(P−1)+1;
 * non-uniform P(P−1)+2), scikit-image's `nri_uniform` bin order.
 */
export function lbpCodes(img: GreyImage, P: number, R: number, method: LbpMethod): Int32Array {
  const rr = Array.from({ length: P }, (_, p) => round5(-R * Math.sin((2 * Math.PI * p) / P)));
  const cc = Array.from({ length: P }, (_, p) => round5(R * Math.cos((2 * Math.PI * p) / P)));
  const out = new Int32Array(img.width * img.height);
  const bits = new Uint8Array(P);
  for (let r = 0; r < img.height; r++) {
    for (let c = 0; c < img.width; c++) {
      const centre = img.data[r * img.width + c];
      let code = 0, ones = 0;
      for (let p = 0; p < P; p++) {
        bits[p] = sample(img, r + rr[p], c + cc[p]) - centre >= 0 ? 1 : 0;
        code += bits[p] * 2 ** p;
        ones += bits[p];
      }
      if (method === 'default') {
        out[r * img.width + c] = code;
        continue;
      }
      let changes = 0;
      for (let p = 0; p < P; p++) changes += bits[p] !== bits[(p + 1) % P] ? 1 : 0;
      if (method === 'riu2') {
        out[r * img.width + c] = changes <= 2 ? ones : P + 1;
        continue;
      }
      if (changes > 2) out[r * img.width + c] = P * (P - 1) + 2;
      else if (ones === 0) out[r * img.width + c] = 0;
      else if (ones === P) out[r * img.width + c] = P * (P - 1) + 1;
      else {
        // the run of ones starts at the one whose predecessor (circularly) is a zero
        let start = 0;
        while (!(bits[start] === 1 && bits[(start + P - 1) % P] === 0)) start++;
        out[r * img.width + c] = 1 + (ones - 1) * P + ((P - start) % P);
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
