import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawn } from 'node:child_process';
import { mkdir, mkdtemp, readdir, readFile, rm, writeFile, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { main } from '../../src/cli/main.ts';
import { hashTree } from '../../src/pipeline.ts';
import { sha256Hex } from '../../src/util/hash.ts';
import { ContentCache } from '../../src/net/cache.ts';
import { startProcessorServer } from '../servers/processor.ts';
import { truthImage } from '../servers/ground-truth.ts';
import { startFlakyProxy } from './flaky-proxy.ts';

let work: string;
let upstream: Awaited<ReturnType<typeof startProcessorServer>>;
let proxy: Awaited<ReturnType<typeof startFlakyProxy>>;

beforeAll(async () => {
  work = await mkdtemp(join(tmpdir(), 'swatchbook-faults-'));
  const src = truthImage(480, 360);
  await mkdir(join(work, 'images'), { recursive: true });
  await writeFile(join(work, 'images', 'truth.png'), await sharp(src.data, { raw: { width: 480, height: 360, channels: 3 } }).png().toBuffer());
  upstream = await startProcessorServer(join(work, 'images'));
  proxy = await startFlakyProxy(upstream.base.replace(/\/iiif$/, ''), 20261202);
});
afterAll(async () => {
  await proxy.stop();
  await upstream.stop();
  await rm(work, { recursive: true, force: true });
});

async function project(name: string, retries = 6): Promise<string> {
  const dir = join(work, name);
  await mkdir(dir, { recursive: true });
  const id = `${proxy.origin}/iiif/3/truth.png`;
  const manifest = {
    '@context': 'http://iiif.io/api/presentation/3/context.json', id: 'https://boards.example.org/m', type: 'Manifest', label: { en: ['m'] },
    items: [{
      id: 'https://boards.example.org/c', type: 'Canvas', width: 480, height: 360,
      items: [{ id: 'https://boards.example.org/c/p', type: 'AnnotationPage', items: [{ id: 'https://boards.example.org/c/a', type: 'Annotation', motivation: 'painting', target: 'https://boards.example.org/c', body: { id: `${id}/full/max/0/default.png`, type: 'Image', service: [{ id, type: 'ImageService3', profile: 'level2' }] } }] }],
      annotations: [{ id: 'https://boards.example.org/c/t', type: 'AnnotationPage', items: [
        { id: 'https://boards.example.org/t/1', type: 'Annotation', bodyValue: 'oak', target: 'https://boards.example.org/c#xywh=20,20,200,150' },
        { id: 'https://boards.example.org/t/2', type: 'Annotation', bodyValue: 'marble', target: 'https://boards.example.org/c#xywh=250,180,200,160' },
      ] }],
    }],
  };
  await writeFile(join(dir, 'manifest.json'), JSON.stringify(manifest));
  await writeFile(join(dir, 'recipe.json'), JSON.stringify({
    name: 'faults', seed: 'f', sources: [{ manifest: 'manifest.json' }], labels: { oak: [], marble: [] }, scale: { pixelsPerCanvasUnit: 1 },
    patch: { size: 32 }, negatives: { ratio: 1, margin: 4 }, request: { format: 'png' },
    network: { contact: 'mailto:t@example.org', retries, perHost: 2, concurrency: 4, perHostRate: 1000, timeoutMs: 5000 },
  }));
  return join(dir, 'recipe.json');
}

const quiet = () => {
  let err = '';
  return { io: { stdout: { write: () => true } as unknown as NodeJS.WriteStream, stderr: { write: (s: string) => ((err += s), true) } as unknown as NodeJS.WriteStream }, err: () => err };
};

describe('faults survived', () => {
  it('a flaky server: every crop served, retries bounded, per-host limit kept, dataset identical to a clean run', async () => {
    proxy.setMode('clean');
    proxy.reset();
    const clean = await project('clean');
    const q1 = quiet();
    expect(await main(['run', clean, '--quiet'], q1.io), q1.err()).toBe(0);
    proxy.setMode('flaky');
    proxy.reset();
    const flaky = await project('flaky');
    const q2 = quiet();
    expect(await main(['run', flaky, '--quiet'], q2.io), q2.err()).toBe(0);
    const s = proxy.stats();
    console.log('faults injected:', JSON.stringify(s.faults), 'requests:', [...s.asks.values()].reduce((a, b) => a + b, 0));
    expect(Object.keys(s.faults).sort()).toEqual(['429', '500', '503', 'reset', 'slow', 'truncate']);
    expect(s.maxInFlight).toBeLessThanOrEqual(2);
    for (const n of s.asks.values()) expect(n).toBeLessThanOrEqual(4); // at most 3 faults, then served
    const a = await hashTree(join(work, 'clean', 'faults-dataset'));
    const b = await hashTree(join(work, 'flaky', 'faults-dataset'));
    expect([...b.entries()]).toEqual([...a.entries()]);
    expect(JSON.parse(await readFile(join(work, 'flaky', 'faults-dataset', 'card.json'), 'utf8')).composition.failures.count).toBe(0);
  }, 120_000);

  it('a server that stays down: a clear failures list and exit code 1, no hang', async () => {
    proxy.setMode('down');
    proxy.reset();
    const recipe = await project('down', 2);
    const q = quiet();
    const code = await main(['run', recipe, '--quiet'], q.io);
    expect(code).toBe(1);
    const failures = (await readFile(join(work, 'down', 'faults-dataset', 'failures.jsonl'), 'utf8')).trim().split('\n').map((l) => JSON.parse(l));
    expect(failures).toEqual([expect.objectContaining({ stage: 'info', status: 503, attempts: 3, reason: 'HTTP 503 after 3 attempts' })]);
    proxy.setMode('clean');
  }, 60_000);
});

async function filesUnder(dir: string): Promise<string[]> {
  const out: string[] = [];
  const walk = async (d: string) => {
    let entries;
    try {
      entries = await readdir(d, { withFileTypes: true });
    } catch {
      return;
    }
    for (const e of entries) (e.isDirectory() ? await walk(join(d, e.name)) : out.push(join(d, e.name)));
  };
  await walk(dir);
  return out;
}

/** Every cache object must hash to its own name: nothing corrupt is ever kept. */
async function assertCacheSound(cache: string) {
  for (const f of await filesUnder(join(cache, 'objects'))) {
    const name = f.split('/').pop()!;
    if (name.startsWith('.tmp-')) continue; // a killed writer's temporary file, never read; swept on the next run
    expect(sha256Hex(await readFile(f)), f).toBe(name);
  }
}

function runCli(recipe: string): { child: ReturnType<typeof spawn>; done: Promise<number | null> } {
  const child = spawn(process.execPath, [join(process.cwd(), 'bin', 'swatchbook.js'), 'run', recipe, '--quiet'], { stdio: 'ignore' });
  return { child, done: new Promise((r) => child.on('exit', (code) => r(code))) };
}

describe('crash and resume (SIGKILL)', () => {
  it('killed at several points of a harvest and of a build, a rerun gives the uninterrupted result', async () => {
    proxy.setMode('clean');
    proxy.setDelay(15);
    const reference = await project('reference');
    const q = quiet();
    expect(await main(['run', reference, '--quiet'], q.io), q.err()).toBe(0);
    const expected = await hashTree(join(work, 'reference', 'faults-dataset'));

    const recipe = await project('killed');
    const out = join(work, 'killed', 'faults-dataset');
    const cache = join(work, 'killed', '.swatchbook-cache');
    // Harvest: kill after 3, then after 20 image requests have been answered.
    for (const after of [3, 20]) {
      proxy.reset();
      const { child, done } = runCli(recipe);
      while (proxy.stats().imageRequests < after && child.exitCode === null) await new Promise((r) => setTimeout(r, 5));
      child.kill('SIGKILL');
      await done;
      await assertCacheSound(cache);
      await expect(stat(out)).rejects.toThrow(); // no dataset appears unless complete
    }
    // Build: kill while the dataset is being written under its temporary name.
    proxy.reset();
    proxy.setDelay(0);
    {
      const { child, done } = runCli(recipe);
      const parent = join(work, 'killed');
      let seen = false;
      while (child.exitCode === null && !seen) {
        seen = (await readdir(parent)).some((n) => n.startsWith('faults-dataset.partial-'));
        if (!seen) await new Promise((r) => setTimeout(r, 2));
      }
      child.kill('SIGKILL');
      await done;
      await assertCacheSound(cache);
      if (seen) await expect(stat(out)).rejects.toThrow();
    }
    // The rerun finishes; what was cached is not asked again.
    const cachedRefs = (await new ContentCache(cache).refUrls()).length;
    proxy.reset();
    const { done } = runCli(recipe);
    expect(await done).toBe(0);
    const asked = [...proxy.stats().asks.values()].reduce((a, b) => a + b, 0);
    const totalRefs = (await new ContentCache(cache).refUrls()).length;
    expect(asked).toBe(totalRefs - cachedRefs);
    const got = await hashTree(out);
    expect([...got.entries()]).toEqual([...expected.entries()]);
    expect((await readdir(join(work, 'killed'))).filter((n) => n.includes('.partial-') || n.includes('.old-'))).toEqual([]);
    expect((await filesUnder(cache)).filter((f) => f.split('/').pop()!.startsWith('.tmp-'))).toEqual([]);
    await assertCacheSound(cache);
  }, 180_000);
});
