/**
 * Whole-process benchmarks of the compiled command (`npm run build` first; `npm run bench` does):
 *  - start-up: `swatchbook --version` ÷ `node -e 0`, median of 10 each, alternating;
 *  - harvest overhead: the whole `swatchbook harvest` process (start-up included) ÷ a bare fetch process
 *    (got + p-limit at the same concurrency) of the same URLs, on 40 images and about 440 requests served
 *    by iiif-processor on 127.0.0.1, a fresh cache each run, median of RUNS.
 * Prints rows as JSON lines for bench/run.ts, or a table when run alone: `tsx bench/process.ts`.
 */
import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { spawn } from 'node:child_process';
import sharp from 'sharp';
import { normaliseRecipe } from '../src/recipe/load.ts';
import { planRecipe } from '../src/pipeline.ts';
import { canvasFacts } from '../src/dataset/canvas-facts.ts';
import { startProcessorServer, truthImage } from './servers.ts';

const RUNS = Number(process.env.RUNS ?? 5);
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
const ROOT = join(import.meta.dirname, '..');
const BIN = join(ROOT, 'bin', 'swatchbook.js');

/**
 * Wall time of a child process in milliseconds; rejects when it fails. Asynchronous: the image server
 * runs in this process and must keep answering while the child works.
 */
function timed(args: string[], cwd = ROOT): Promise<number> {
  return new Promise((resolve, reject) => {
    const t = performance.now();
    const child = spawn(process.execPath, args, { cwd, stdio: ['ignore', 'ignore', 'pipe'] });
    let err = '';
    child.stderr.on('data', (d) => (err += d));
    child.on('error', reject);
    child.on('close', (code) => (code === 0 ? resolve(performance.now() - t) : reject(new Error(`${args.join(' ')} exited ${code}: ${err}`))));
  });
}

export async function processBenchmarks(): Promise<[string, string, string][]> {
  const rows: [string, string, string][] = [];

  // 1. start-up
  const ours: number[] = [], bare: number[] = [];
  for (let i = 0; i < 10; i++) {
    bare.push(await timed(['-e', '0']));
    ours.push(await timed([BIN, '--version']));
  }
  rows.push(['start-up: swatchbook --version ÷ node -e 0 (median of 10)', (median(ours) / median(bare)).toFixed(2), '≤ 2.0']);
  rows.push(['  (milliseconds: swatchbook, node)', `${median(ours).toFixed(0)}, ${median(bare).toFixed(0)}`, '']);

  // 2. harvest process ÷ bare fetch process
  const work = await mkdtemp(join(tmpdir(), 'swatchbook-bench-process-'));
  const W = 1200, H = 900, N = 40;
  const src = truthImage(W, H);
  await mkdir(join(work, 'images'), { recursive: true });
  const png = await sharp(src.data, { raw: { width: W, height: H, channels: 3 } }).png().toBuffer();
  for (let i = 0; i < N; i++) await writeFile(join(work, 'images', `p${i}.png`), png);
  // The server shares this 2-core machine with the client: one libvips worker keeps its share steady between runs,
  // so the ratio measures the client's overhead rather than scheduling noise.
  sharp.concurrency(1);
  const server = await startProcessorServer(join(work, 'images'));
  try {
    const B = 'https://bench.example.org';
    const manifest = {
      '@context': 'http://iiif.io/api/presentation/3/context.json', id: `${B}/m`, type: 'Manifest', label: { en: ['bench'] },
      items: Array.from({ length: N }, (_, i) => ({
        id: `${B}/c/${i}`, type: 'Canvas', width: W / 2, height: H / 2,
        items: [{ id: `${B}/c/${i}/p`, type: 'AnnotationPage', items: [{ id: `${B}/c/${i}/a`, type: 'Annotation', motivation: 'painting', target: `${B}/c/${i}`, body: { id: `${server.base}/3/p${i}.png/full/max/0/default.png`, type: 'Image', service: [{ id: `${server.base}/3/p${i}.png`, type: 'ImageService3', profile: 'level2' }] } }] }],
        annotations: [{ id: `${B}/c/${i}/t`, type: 'AnnotationPage', items: [{ id: `${B}/c/${i}/t/1`, type: 'Annotation', motivation: 'tagging', bodyValue: 'oak', target: `${B}/c/${i}#xywh=40,40,200,150` }] }],
      })),
    };
    const doc = { name: 'process-bench', seed: 'bench', sources: [{ manifest: 'manifest.json' }], labels: { oak: [] }, scale: { pixelsPerCanvasUnit: 2 }, patch: { size: 64 }, negatives: { ratio: 0.6 }, request: { format: 'png' }, network: { contact: 'mailto:bench@example.org', concurrency: 4, perHost: 4, perHostRate: 1000, retries: 0 } };
    await writeFile(join(work, 'manifest.json'), JSON.stringify(manifest));
    await writeFile(join(work, 'recipe.json'), JSON.stringify(doc));
    const { plan } = await planRecipe(normaliseRecipe(doc, join(work, 'recipe.json'), work), { cacheDir: join(work, 'plan-cache') });
    // The same URLs the harvest fetches: info.json, every crop piece, and the canvas thumbnails the report uses.
    const thumbnails = canvasFacts(plan).flatMap((c) => (c.thumbnail ? c.thumbnail.crop.stitch.pieces.map((p) => p.url) : []));
    const urls = [...new Set([...Array.from({ length: N }, (_, i) => `${server.base}/3/p${i}.png/info.json`), ...plan.crops.flatMap((c) => c.stitch.pieces.map((p) => p.url)), ...thumbnails])];
    await writeFile(join(work, 'urls.json'), JSON.stringify(urls));
    const bareScript = join(work, 'bare.mjs');
    await writeFile(bareScript, [
      `import got from ${JSON.stringify(join(ROOT, 'node_modules', 'got', 'dist', 'source', 'index.js'))};`,
      `import pLimit from ${JSON.stringify(join(ROOT, 'node_modules', 'p-limit', 'index.js'))};`,
      "import { readFileSync } from 'node:fs';",
      `const urls = JSON.parse(readFileSync(${JSON.stringify(join(work, 'urls.json'))}, 'utf8'));`,
      'const limit = pLimit(4);',
      "await Promise.all(urls.map((u) => limit(() => got(u, { responseType: 'buffer', retry: { limit: 0 } }))));",
    ].join('\n'));
    const ratios: number[] = [];
    for (let r = 0; r < RUNS; r++) {
      // Alternate which goes first: the server warms its caches on whatever runs first.
      const harvest = () => timed([BIN, 'harvest', join(work, 'recipe.json'), '--quiet', '--cache', join(work, `cache-${r}`)]);
      let b: number, h: number;
      if (r % 2 === 0) {
        b = await timed([bareScript]);
        h = await harvest();
      } else {
        h = await harvest();
        b = await timed([bareScript]);
      }
      ratios.push(h / b);
      if (process.env.BENCH_VERBOSE) console.error(`bare ${b.toFixed(0)} ms, harvest ${h.toFixed(0)} ms`);
      await rm(join(work, `cache-${r}`), { recursive: true, force: true });
    }
    rows.push(['harvest process ÷ bare fetch process (40 images, concurrency 4)', median(ratios).toFixed(3), '≤ 1.10']);
    rows.push(['  (requests per run)', String(urls.length), '']);
  } finally {
    await server.stop();
    await rm(work, { recursive: true, force: true });
  }
  return rows;
}

if (process.argv[1] && import.meta.filename === process.argv[1]) {
  const rows = await processBenchmarks();
  const w = Math.max(...rows.map((r) => r[0].length));
  for (const [a, b, c] of rows) console.log(`${a.padEnd(w)}  ${b.padStart(8)}  ${c}`);
}
