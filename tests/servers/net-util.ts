import http from 'node:http';
import { createServer } from 'node:net';
import type { ChildProcess } from 'node:child_process';

export async function freePort(): Promise<number> {
  const srv = createServer();
  await new Promise<void>((r) => srv.listen(0, '127.0.0.1', () => r()));
  const port = (srv.address() as { port: number }).port;
  await new Promise<void>((r) => srv.close(() => r()));
  return port;
}

/** Polls a URL on loopback until it answers (any status), or fails after `ms`. */
export async function waitForUrl(url: string, child?: ChildProcess, ms = 10_000): Promise<void> {
  const start = Date.now();
  for (;;) {
    if (child && child.exitCode !== null) throw new Error(`server exited with code ${child.exitCode} before answering ${url}`);
    const ok = await new Promise<boolean>((resolve) => {
      const req = http.get(url, (res) => {
        res.resume();
        resolve(true);
      });
      req.on('error', () => resolve(false));
    });
    if (ok) return;
    if (Date.now() - start > ms) throw new Error(`no answer from ${url} within ${ms} ms`);
    await new Promise((r) => setTimeout(r, 20));
  }
}
