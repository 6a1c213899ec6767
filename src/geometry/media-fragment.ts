import type { Rect } from './rect.ts';

/** A spatial media fragment as written: `xywh=[pixel:|percent:]x,y,w,h`. */
export interface SpatialFragment {
  unit: 'pixel' | 'percent';
  x: number;
  y: number;
  w: number;
  h: number;
}

/**
 * Parses the `xywh` dimension of a fragment (`xywh=160,120,320,240`, `xywh=percent:25,25,50,50`),
 * following Media Fragments URI 1.0 `#naming-space`. Several name=value pairs may be joined
 * with `&`; the last `xywh` wins (§6.2.1). Returns undefined when there is no `xywh`.
 * Throws on a malformed `xywh` value: in a dataset a silently ignored region is worse than an error.
 * Decimals are accepted (common practice in IIIF annotations written by tools), negatives are not.
 */
export function parseXywh(fragment: string): SpatialFragment | undefined {
  const pairs = fragment.replace(/^#/, '').split('&');
  let value: string | undefined;
  for (const pair of pairs) {
    const eq = pair.indexOf('=');
    if (eq < 0) continue;
    if (decodeURIComponent(pair.slice(0, eq)) === 'xywh') value = decodeURIComponent(pair.slice(eq + 1));
  }
  if (value === undefined) return undefined;
  let unit: SpatialFragment['unit'] = 'pixel';
  let numbers = value;
  const m = /^(pixel|percent):(.*)$/.exec(value);
  if (m) {
    unit = m[1] as SpatialFragment['unit'];
    numbers = m[2];
  }
  const parts = numbers.split(',');
  if (parts.length !== 4 || !parts.every((p) => /^\s*\d+(\.\d+)?\s*$/.test(p))) {
    throw new SyntaxError(`"xywh=${value}" is not four non-negative numbers (Media Fragments URI 1.0, spatial dimension)`);
  }
  const [x, y, w, h] = parts.map(Number);
  if (!(w > 0 && h > 0)) throw new RangeError(`"xywh=${value}" has zero width or height`);
  if (unit === 'percent' && (x + w > 100.000001 || y + h > 100.000001)) {
    throw new RangeError(`"xywh=${value}" reaches past 100 percent`);
  }
  return { unit, x, y, w, h };
}

/** Resolves a fragment against the media size: percent x,w of width and y,h of height. */
export function fragmentToRect(f: SpatialFragment, width: number, height: number): Rect {
  if (f.unit === 'pixel') return { x: f.x, y: f.y, w: f.w, h: f.h };
  return { x: (f.x / 100) * width, y: (f.y / 100) * height, w: (f.w / 100) * width, h: (f.h / 100) * height };
}

/** Splits `uri#fragment` into its parts. */
export function splitFragment(uri: string): { base: string; fragment?: string } {
  const i = uri.indexOf('#');
  return i < 0 ? { base: uri } : { base: uri.slice(0, i), fragment: uri.slice(i + 1) };
}
