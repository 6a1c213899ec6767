import http from 'node:http';
import { latticeHash } from '../../src/demo/noise.ts';

export type ProxyMode = 'clean' | 'flaky' | 'down';

/**
 * A proxy on 127.0.0.1 in front of a real image server that misbehaves on
 * purpose. In `flaky` mode each request is judged by a seeded hash of its path
 * and how often that path was asked before: the first three asks of a path may
 * get 500, 503, 429 with Retry-After, a reset connection, a truncated body or a
 * slow answer; later asks always succeed, so retries are bounded. `down` answers 503 forever.
 */
export async function startFlakyProxy(upstream: string, seed: number) {
  let mode: ProxyMode = 'clean';
  let inFlight = 0;
  let maxInFlight = 0;
  const asks = new Map<string, number>();
  const faults: Record<string, number> = {};
  let imageRequests = 0;
  let delayMs = 0;
  let origin = '';
  const fault = (kind: string) => (faults[kind] = (faults[kind] ?? 0) + 1);
  const server = http.createServer(async (req, res) => {
    inFlight++;
    maxInFlight = Math.max(maxInFlight, inFlight);
    const done = () => inFlight--;
    res.on('close', done);
    const path = req.url ?? '/';
    const n = asks.get(path) ?? 0;
    asks.set(path, n + 1);
    if (!path.endsWith('info.json')) imageRequests++;
    if (delayMs) await new Promise((r) => setTimeout(r, delayMs));
    if (mode === 'down') {
      fault('503-down');
      res.writeHead(503, { 'retry-after': '0' }).end('down');
      return;
    }
    const key = [...path].reduce((a, c) => (a * 31 + c.charCodeAt(0)) | 0, 7);
    const h = latticeHash(n, key, seed);
    const kind = mode === 'flaky' && n < 3 && h < 0.6 ? Math.floor(latticeHash(n, key, seed + 1) * 6) : -1;
    if (kind === 0) { fault('500'); res.writeHead(500).end('boom'); return; }
    if (kind === 1) { fault('503'); res.writeHead(503).end('busy'); return; }
    if (kind === 2) { fault('429'); res.writeHead(429, { 'retry-after': n === 0 ? '1' : '0' }).end('slow down'); return; }
    if (kind === 3) { fault('reset'); req.socket.destroy(); return; }
    const upstreamRes = await fetch(`${upstream}${path}`);
    const body = Buffer.from(await upstreamRes.arrayBuffer());
    const headers = { 'content-type': upstreamRes.headers.get('content-type') ?? 'application/octet-stream', 'content-length': String(body.length) };
    if (kind === 4 && upstreamRes.status === 200 && body.length > 10) {
      fault('truncate');
      res.writeHead(200, headers);
      res.write(body.subarray(0, Math.floor(body.length / 2)));
      setTimeout(() => res.socket?.destroy(), 5);
      return;
    }
    if (kind === 5) {
      fault('slow');
      await new Promise((r) => setTimeout(r, 150));
    }
    res.writeHead(upstreamRes.status, headers).end(body);
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
  origin = `http://127.0.0.1:${(server.address() as { port: number }).port}`;
  return {
    origin,
    setMode: (m: ProxyMode) => (mode = m),
    setDelay: (ms: number) => (delayMs = ms),
    reset: () => {
      asks.clear();
      maxInFlight = 0;
      imageRequests = 0;
      for (const k of Object.keys(faults)) delete faults[k];
    },
    stats: () => ({ maxInFlight, faults: { ...faults }, asks: new Map(asks), imageRequests }),
    stop: () => new Promise<void>((resolve) => {
      server.close(() => resolve());
      server.closeAllConnections();
    }),
  };
}
