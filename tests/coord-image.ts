import sharp from 'sharp';
import nock from 'nock';
import type { RgbImage } from '../src/image/pixels.ts';

/**
 * A synthetic image whose pixels encode their own coordinates:
 * R = x mod 256, G = y mod 256, B = high nibbles of x and y. A patch tells where it came from.
 */
export function coordImage(width: number, height: number): RgbImage {
  const data = Buffer.alloc(width * height * 3);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const i = (y * width + x) * 3;
      data[i] = x & 255;
      data[i + 1] = y & 255;
      data[i + 2] = (((x >> 8) & 15) << 4) | ((y >> 8) & 15);
    }
  }
  return { width, height, data };
}

export function decodeCoord(img: RgbImage, i: number, j: number): { x: number; y: number } {
  const k = (j * img.width + i) * 3;
  return { x: ((img.data[k + 2] >> 4) << 8) | img.data[k], y: ((img.data[k + 2] & 15) << 8) | img.data[k + 1] };
}

export interface MockServerOptions {
  version: 2 | 3;
  level: 0 | 1 | 2;
  tiles?: { width: number; scaleFactors: number[] }[];
  maxWidth?: number;
  /** Answer requests above maxWidth with a silently smaller image (a misbehaving server). */
  silentlyShrink?: boolean;
  extra?: Record<string, unknown>;
  /** Delay each image answer by a pseudo-random time (ms) from this function, to shuffle arrival order. */
  delayMs?: (path: string) => number;
}

/**
 * Serves an RgbImage as a IIIF image service through nock: info.json, and
 * region/size requests computed with sharp (extract, then resize), PNG or JPEG.
 * Counts requests per path so tests can assert what was fetched.
 */
export function mockImageService(host: string, path: string, img: RgbImage, o: MockServerOptions) {
  const counts = new Map<string, number>();
  const id = `${host}${path}`;
  const info = o.version === 3
    ? { '@context': 'http://iiif.io/api/image/3/context.json', id, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: `level${o.level}`, width: img.width, height: img.height,
        ...(o.tiles ? { tiles: o.tiles } : {}), ...(o.maxWidth ? { maxWidth: o.maxWidth } : {}), ...o.extra }
    : { '@context': 'http://iiif.io/api/image/2/context.json', '@id': id, protocol: 'http://iiif.io/api/image', width: img.width, height: img.height,
        ...(o.tiles ? { tiles: o.tiles } : {}),
        profile: [`http://iiif.io/api/image/2/level${o.level}.json`, { formats: ['jpg', 'png'], ...(o.maxWidth ? { maxWidth: o.maxWidth } : {}) }], ...o.extra };
  const scope = nock(host)
    .persist()
    .get(new RegExp(`^${path.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}/.*`))
    .reply(async (uri) => {
      const rest = uri.slice(path.length + 1);
      counts.set(rest, (counts.get(rest) ?? 0) + 1);
      if (rest === 'info.json') return [200, JSON.stringify(info), { 'content-type': 'application/ld+json' }];
      if (o.delayMs) await new Promise((r) => setTimeout(r, o.delayMs!(rest)));
      const m = /^(full|\d+,\d+,\d+,\d+)\/(\^?)(max|full|\d+,|\d+,\d+)\/0\/default\.(png|jpg)$/.exec(rest);
      if (!m) return [400, 'bad request'];
      const [rx, ry, rw, rh] = m[1] === 'full' ? [0, 0, img.width, img.height] : m[1].split(',').map(Number);
      const w = Math.min(rw, img.width - rx), h = Math.min(rh, img.height - ry);
      if (w <= 0 || h <= 0) return [400, 'region out of bounds'];
      let ow = w, oh = h;
      if (m[3] !== 'max' && m[3] !== 'full') {
        const [a, b] = m[3].split(',');
        ow = Number(a);
        oh = b === '' ? Math.round((h * ow) / w) : Number(b);
      }
      if (o.maxWidth && (ow > o.maxWidth || oh > o.maxWidth)) {
        if (!o.silentlyShrink) return [400, 'too large'];
        const f = o.maxWidth / Math.max(ow, oh);
        ow = Math.floor(ow * f);
        oh = Math.floor(oh * f);
      }
      let pipe = sharp(img.data, { raw: { width: img.width, height: img.height, channels: 3 } }).extract({ left: rx, top: ry, width: w, height: h });
      if (ow !== w || oh !== h) pipe = pipe.resize(ow, oh, { fit: 'fill' });
      const body = m[4] === 'png' ? await pipe.png().toBuffer() : await pipe.jpeg({ quality: 95 }).toBuffer();
      return [200, body, { 'content-type': m[4] === 'png' ? 'image/png' : 'image/jpeg' }];
    });
  return { counts, info, scope, id, infoUrl: `${id}/info.json` };
}

/** Lossy check: R and G against x and y modulo 256 (circular distance), for JPEG where the B nibbles blur. */
export function coordError(img: RgbImage, i: number, j: number, x: number, y: number): number {
  const k = (j * img.width + i) * 3;
  const d = (a: number, b: number) => {
    const t = Math.abs(a - (b & 255));
    return Math.min(t, 256 - t);
  };
  return Math.max(d(img.data[k], x), d(img.data[k + 1], y));
}
