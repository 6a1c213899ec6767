/**
 * A colour histogram in HSV (hue 8 bins, saturation 3, value 3: 72 bins, normalised
 * to sum 1), pure. HSV from 8-bit sRGB by the usual hexcone formulas (from memory);
 * hue bins are 45° wide starting at red, grey pixels (saturation 0) fall in hue bin 0.
 */
export const COLOUR_BINS = 8 * 3 * 3;

export function hsvHistogram(rgb: { width: number; height: number; data: ArrayLike<number> }): Float64Array {
  const hist = new Float64Array(COLOUR_BINS);
  const n = rgb.width * rgb.height;
  for (let i = 0; i < n; i++) {
    const r = rgb.data[i * 3] / 255, g = rgb.data[i * 3 + 1] / 255, b = rgb.data[i * 3 + 2] / 255;
    const max = Math.max(r, g, b), min = Math.min(r, g, b), d = max - min;
    let h = 0;
    if (d > 0) {
      if (max === r) h = ((g - b) / d) % 6;
      else if (max === g) h = (b - r) / d + 2;
      else h = (r - g) / d + 4;
      h = (h * 60 + 360) % 360;
    }
    const s = max === 0 ? 0 : d / max;
    const hb = Math.min(7, Math.floor(h / 45)), sb = Math.min(2, Math.floor(s * 3)), vb = Math.min(2, Math.floor(max * 3));
    hist[(hb * 3 + sb) * 3 + vb]++;
  }
  if (n) for (let k = 0; k < hist.length; k++) hist[k] /= n;
  return hist;
}
