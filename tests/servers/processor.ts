import http from 'node:http';
import { createReadStream, existsSync } from 'node:fs';
import { join } from 'node:path';
import { Processor } from 'iiif-processor';
import type { RunningServer } from './iipsrv.ts';

/**
 * A small HTTP server around iiif-processor (Image API 3 and 2, level 2) on
 * 127.0.0.1, serving the files of a folder. `max` passes iiif-processor's own
 * size limit (which it applies to the whole image, not to the output: a misbehaving server on purpose).
 */
export async function startProcessorServer(folder: string, opts: { max?: { width: number } } = {}): Promise<RunningServer & { requests: () => number }> {
  const dims = new Map<string, unknown>();
  let requests = 0;
  let base = '';
  const server = http.createServer(async (req, res) => {
    requests++;
    try {
      const id = decodeURIComponent((req.url ?? '').split('/')[3] ?? '');
      const file = join(folder, id);
      if (!/^[\w.-]+$/.test(id) || !existsSync(file)) {
        res.writeHead(404).end('not found');
        return;
      }
      const proc = new Processor(`${base}${req.url}`, async () => createReadStream(file), {
        ...(opts.max ? { max: opts.max } : {}),
        ...(dims.has(id) ? { dimensionFunction: async () => dims.get(id) as never } : {}),
      });
      const result = await proc.execute();
      const info = (proc as unknown as { sizeInfo?: unknown }).sizeInfo;
      if (!dims.has(id) && info) dims.set(id, info);
      if (result.type === 'redirect') res.writeHead(303, { location: result.location }).end();
      else if (result.type === 'error') res.writeHead(result.statusCode ?? 500).end(result.message);
      else res.writeHead(200, { 'content-type': result.contentType }).end(result.body);
    } catch (err) {
      res.writeHead(500).end(String(err));
    }
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
  base = `http://127.0.0.1:${(server.address() as { port: number }).port}`;
  return {
    base: `${base}/iiif`,
    requests: () => requests,
    stop: () =>
      new Promise<void>((resolve) => {
        server.close(() => resolve());
        server.closeAllConnections();
      }),
  };
}
