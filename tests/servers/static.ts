import http from 'node:http';
import { readFile } from 'node:fs/promises';
import { join, normalize, sep } from 'node:path';
import type { RunningServer } from './iipsrv.ts';

const TYPES: Record<string, string> = { '.json': 'application/ld+json', '.jpg': 'image/jpeg', '.png': 'image/png' };

/**
 * Serves a folder of static level-0 tile pyramids on 127.0.0.1, rewriting each
 * info.json's placeholder id to the address it is served from, as a deployment would.
 */
export async function startStaticServer(root: string): Promise<RunningServer & { requests: () => number }> {
  let requests = 0;
  let origin = '';
  const server = http.createServer(async (req, res) => {
    requests++;
    const rel = decodeURIComponent(new URL(req.url ?? '/', 'http://x').pathname);
    const file = normalize(join(root, rel));
    if (!file.startsWith(root + sep)) {
      res.writeHead(400).end();
      return;
    }
    try {
      let body = await readFile(file);
      if (file.endsWith('info.json')) {
        const doc = JSON.parse(body.toString()) as Record<string, unknown>;
        const id = `${origin}${rel.replace(/\/info\.json$/, '')}`;
        if ('@id' in doc) doc['@id'] = id;
        else doc.id = id;
        body = Buffer.from(JSON.stringify(doc));
      }
      res.writeHead(200, { 'content-type': TYPES[file.slice(file.lastIndexOf('.'))] ?? 'application/octet-stream' }).end(body);
    } catch {
      res.writeHead(404).end('not found');
    }
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
  origin = `http://127.0.0.1:${(server.address() as { port: number }).port}`;
  return {
    base: origin,
    requests: () => requests,
    stop: () =>
      new Promise<void>((resolve) => {
        server.close(() => resolve());
        server.closeAllConnections();
      }),
  };
}
