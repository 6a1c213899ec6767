import http from 'node:http';
import { createReadStream } from 'node:fs';
import { readFile, stat } from 'node:fs/promises';
import { join, normalize, sep } from 'node:path';
import { Processor } from 'iiif-processor';
import sharp from 'sharp';
import { UsageError } from '../errors.ts';

export interface DemoServer {
  base: string;
  port: number;
  close(): Promise<void>;
  /** Requests answered, by path prefix (for reports and tests). */
  counts: Map<string, number>;
}

const TYPES: Record<string, string> = { '.json': 'application/ld+json', '.jpg': 'image/jpeg', '.png': 'image/png' };

/**
 * The demo's embedded IIIF server on 127.0.0.1: documents from memory, Image
 * API 3 and 2 (level 2) through iiif-processor over the board PNGs, Image API
 * 1.1 (level 1) translated onto the 2.x processor, and a static level-0 tile
 * pyramid written by sharp. Nothing listens beyond loopback.
 */
export async function startDemoServer(site: string, documents: Map<string, unknown>, port: number): Promise<DemoServer> {
  const dims = new Map<string, unknown>();
  const counts = new Map<string, number>();
  let base = '';
  const server = http.createServer(async (req, res) => {
    try {
      const path = decodeURIComponent(new URL(req.url ?? '/', 'http://x').pathname);
      const prefix = path.split('/')[1] ?? '';
      counts.set(prefix, (counts.get(prefix) ?? 0) + 1);
      const doc = documents.get(path.slice(1));
      if (doc !== undefined) return send(res, 200, JSON.stringify(doc, null, 2), 'application/ld+json');
      let requestUrl = `${base}${req.url}`;
      if (path.startsWith('/iiif/1/')) {
        // Image API 1.1 level 1, in front of the 2.x processor: its own info.json, its own URL checks.
        const id = path.split('/')[3] ?? '';
        if (!/^[\w.-]+\.png$/.test(id)) return send(res, 404, 'not found', 'text/plain');
        const file = join(site, 'images', id);
        const rest = path.split('/').slice(4);
        if (rest.length === 1 && rest[0] === 'info.json') {
          const meta = await sharp(file).metadata().catch(() => undefined);
          if (!meta?.width || !meta.height) return send(res, 404, 'not found', 'text/plain');
          return send(res, 200, JSON.stringify(image11Info(`${base}/iiif/1/${id}`, meta.width, meta.height), null, 2), 'application/json');
        }
        const translated = image11ToImage2(rest);
        if (typeof translated !== 'string') return send(res, translated.status, translated.message, 'text/plain');
        requestUrl = `${base}/iiif/2/${id}/${translated}`;
      }
      if (path.startsWith('/iiif/3/') || path.startsWith('/iiif/2/') || path.startsWith('/iiif/1/')) {
        const id = path.split('/')[3] ?? '';
        if (!/^[\w.-]+\.png$/.test(id)) return send(res, 404, 'not found', 'text/plain');
        const file = join(site, 'images', id);
        await stat(file).catch(() => null);
        const proc = new Processor(requestUrl, async () => createReadStream(file), {
          pathPrefix: '/iiif/{{version}}/',
          ...(dims.has(id) ? { dimensionFunction: async () => dims.get(id) as never } : {}),
        });
        const result = await proc.execute();
        const info = (proc as unknown as { sizeInfo?: unknown }).sizeInfo;
        if (!dims.has(id) && info) dims.set(id, info);
        if (result.type === 'redirect') {
          res.writeHead(303, { location: result.location }).end();
          return;
        }
        if (result.type === 'error') return send(res, result.statusCode ?? 500, result.message, 'text/plain');
        return send(res, 200, result.body as Buffer | string, result.contentType);
      }
      if (path.startsWith('/static/') || path.startsWith('/images/')) {
        const root = join(site, path.startsWith('/static/') ? 'static' : 'images');
        const rel = path.replace(/^\/(static|images)\//, '');
        const file = normalize(join(root, rel));
        if (!file.startsWith(root + sep)) return send(res, 400, 'bad path', 'text/plain');
        let body: Buffer;
        try {
          body = await readFile(file);
        } catch {
          return send(res, 404, 'not found', 'text/plain');
        }
        if (file.endsWith('info.json')) {
          const info = JSON.parse(body.toString('utf8')) as Record<string, unknown>;
          info.id = `${base}${path.replace(/\/info\.json$/, '')}`;
          body = Buffer.from(JSON.stringify(info, null, 2));
        }
        const ext = file.slice(file.lastIndexOf('.'));
        return send(res, 200, body, TYPES[ext] ?? 'application/octet-stream');
      }
      send(res, 404, 'not found', 'text/plain');
    } catch (err) {
      send(res, 500, String((err as Error).message ?? err), 'text/plain');
    }
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', (err: NodeJS.ErrnoException) => {
      reject(err.code === 'EADDRINUSE' ? new UsageError(`port ${port} on 127.0.0.1 is taken; choose another with --port`) : err);
    });
    server.listen(port, '127.0.0.1', () => resolve());
  });
  const actual = (server.address() as { port: number }).port;
  base = `http://127.0.0.1:${actual}`;
  return {
    base,
    port: actual,
    counts,
    close: () =>
      new Promise<void>((resolve) => {
        server.close(() => resolve());
        server.closeAllConnections();
      }),
  };
}

function send(res: http.ServerResponse, status: number, body: Buffer | string, type: string): void {
  res.writeHead(status, { 'content-type': type, 'access-control-allow-origin': '*' }).end(body);
}

/** An Image API 1.1 info.json (§5) for a level-1 service with 256-px tiles. */
function image11Info(id: string, width: number, height: number): Record<string, unknown> {
  return {
    '@context': 'http://library.stanford.edu/iiif/image-api/1.1/context.json',
    '@id': id,
    width,
    height,
    scale_factors: [1, 2, 4],
    tile_width: 256,
    tile_height: 256,
    formats: ['jpg', 'png'],
    qualities: ['native'],
    profile: 'http://library.stanford.edu/iiif/image-api/1.1/compliance.html#level1',
  };
}

/**
 * Checks `{region}/{size}/{rotation}/{quality}.{format}` against Image API 1.1
 * level 1 (§4, compliance: pixel regions; `full`, `w,`, `,h` and `pct:n` sizes;
 * rotation by 90s; `native` quality) and spells it for the 2.x processor.
 * Anything else is refused as a level-1 server would: 400 for bad syntax, 501 for
 * what level 1 does not implement (§6).
 */
export function image11ToImage2(parts: readonly string[]): string | { status: number; message: string } {
  if (parts.length !== 4) return { status: 400, message: 'expected {region}/{size}/{rotation}/{quality}.{format}' };
  const [region, size, rotation, last] = parts;
  const m = /^(\w+)\.(\w+)$/.exec(last);
  if (!m) return { status: 400, message: `bad quality.format ${last}` };
  const [, quality, format] = m;
  if (region !== 'full' && !/^\d+,\d+,\d+,\d+$/.test(region)) return { status: 501, message: `region ${region} is not supported at level 1` };
  if (size !== 'full' && !/^\d+,$/.test(size) && !/^,\d+$/.test(size) && !/^pct:\d+(\.\d+)?$/.test(size)) return { status: 501, message: `size ${size} is not supported at level 1` };
  if (!['0', '90', '180', '270'].includes(rotation)) return { status: 501, message: `rotation ${rotation} is not supported at level 1` };
  if (quality !== 'native') return { status: 501, message: `quality ${quality} is not supported at level 1` };
  if (format !== 'jpg' && format !== 'png') return { status: 415, message: `format ${format} is not served` };
  return `${region}/${size}/${rotation}/default.${format}`;
}
