import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import type { PatchDescriptors } from '../probe/describe.ts';

/**
 * Describes patch files on a pool of worker threads (one per core, at most
 * `threads`): files go out in batches, descriptors come back in the files'
 * order whatever the order of completion. Running from TypeScript sources (tests,
 * benchmarks) the workers load them through tsx; the compiled package loads its
 * JavaScript.
 */
export async function describeFiles(files: readonly string[], opts: { threads?: number; batch?: number; onProgress?: (done: number, total: number) => void } = {}): Promise<PatchDescriptors[]> {
  const threads = Math.max(1, Math.min(opts.threads ?? availableParallelism(), Math.ceil(files.length / 16) || 1));
  const batch = opts.batch ?? 64;
  const ts = import.meta.url.endsWith('.ts');
  const url = new URL(ts ? './describe-worker.ts' : './describe-worker.js', import.meta.url);
  const out: PatchDescriptors[] = new Array(files.length);
  let next = 0, done = 0;
  const workers = Array.from({ length: threads }, () =>
    ts
      ? new Worker(`import(${JSON.stringify(import.meta.resolve('tsx/esm/api'))}).then((m) => { m.register(); return import(${JSON.stringify(url.href)}); });`, { eval: true })
      : new Worker(url));
  try {
    await Promise.all(workers.map((w) => new Promise<void>((resolve, reject) => {
      let start = 0;
      const send = () => {
        if (next >= files.length) return resolve();
        start = next;
        next = Math.min(files.length, next + batch);
        w.postMessage({ job: start, files: files.slice(start, next) });
      };
      w.on('message', (m: { job: number; features?: PatchDescriptors[]; error?: string }) => {
        if (m.error !== undefined) return reject(new Error(`${files[m.job]}…: ${m.error}`));
        m.features!.forEach((f, i) => (out[m.job + i] = f));
        done += m.features!.length;
        opts.onProgress?.(done, files.length);
        send();
      });
      w.on('error', reject);
      send();
    })));
  } finally {
    await Promise.all(workers.map((w) => w.terminate()));
  }
  return out;
}
