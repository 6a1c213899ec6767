import http from 'node:http';
import { createReadStream } from 'node:fs';
import { readFile, stat } from 'node:fs/promises';
import { join, normalize, sep } from 'node:path';
import { Processor } from 'iiif-processor';
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
 * API 3 and 2 (level 2) through iiif-processor over the board PNGs, and a
 * static level-0 tile pyramid written by sharp. Nothing listens beyond loopback.
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
      if (path.startsWith('/iiif/3/') || path.startsWith('/iiif/2/')) {
        const id = path.split('/')[3] ?? '';
        if (!/^[\w.-]+\.png$/.test(id)) return send(res, 404, 'not found', 'text/plain');
        const file = join(site, 'images', id);
        await stat(file).catch(() => null);
        const proc = new Processor(`${base}${req.url}`, async () => createReadStream(file), {
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
