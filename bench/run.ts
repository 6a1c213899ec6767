/**
 * swatchbook benchmarks: every figure is a ratio of two things measured side by
 * side in one run, the median of RUNS repetitions, against servers on 127.0.0.1.
 * Printed as a table; not a test (no timing is asserted anywhere).
 *   npm run bench            (RUNS=5 by default)
 */
import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir, cpus } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { execFileSync } from 'node:child_process';
import got from 'got';
import pLimit from 'p-limit';
import sharp from 'sharp';
import { normaliseRecipe } from '../src/recipe/load.ts';
import { planRecipe, runRecipe } from '../src/pipeline.ts';
import { harvestCrops } from '../src/harvest/harvest.ts';
import { stitchCrop } from '../src/cut/stitch.ts';
import { encodePng, extractRgb } from '../src/image/pixels.ts';
import { dHash } from '../src/patch/dhash.ts';
import { sha256Hex } from '../src/util/hash.ts';
import { startProcessorServer, startStaticServer, truthImage } from './servers.ts';
import { processBenchmarks } from './process.ts';

const RUNS = Number(process.env.RUNS ?? 5);
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

const W = 2400, H = 1800;
const work = await mkdtemp(join(tmpdir(), 'swatchbook-bench-'));
const src = truthImage(W, H);
await mkdir(join(work, 'images'), { recursive: true });
const png = await sharp(src.data, { raw: { width: W, height: H, channels: 3 } }).png().toBuffer();
for (let i = 0; i < 4; i++) await writeFile(join(work, 'images', `b${i}.png`), png);
await mkdir(join(work, 'static'), { recursive: true });
await sharp(png).jpeg({ quality: 90 }).tile({ layout: 'iiif3', size: 256, overlap: 0 }).toFile(join(work, 'static', 'b0.dz'));
const proc = await startProcessorServer(join(work, 'images'));
const stat = await startStaticServer(join(work, 'static'));

function manifest(services: { id: string; type: string; profile: string }[]) {
  const cw = W / 2, ch = H / 2;
  return {
    '@context': 'http://iiif.io/api/presentation/3/context.json', id: 'https://bench.example.org/m', type: 'Manifest',
    items: services.map((svc, i) => ({
      id: `https://bench.example.org/c/${i}`, type: 'Canvas', width: cw, height: ch,
      items: [{ id: `https://bench.example.org/c/${i}/p`, type: 'AnnotationPage', items: [{ id: `https://bench.example.org/c/${i}/a`, type: 'Annotation', motivation: 'painting', target: `https://bench.example.org/c/${i}`, body: { id: `${svc.id}/full/max/0/default.jpg`, type: 'Image', service: [svc] } }] }],
      annotations: [{ id: `https://bench.example.org/c/${i}/t`, type: 'AnnotationPage', items: [
        ...[0, 1, 2, 3].map((k) => ({ id: `https://bench.example.org/c/${i}/t${k}`, type: 'Annotation', motivation: 'tagging', bodyValue: k % 2 ? 'oak' : 'marble', target: `https://bench.example.org/c/${i}#xywh=${40 + k * 270},${60 + (k % 2) * 380},240,300` })),
      ] }],
    })),
  };
}

async function recipeFor(name: string, services: { id: string; type: string; profile: string }[], scale = 2) {
  const dir = join(work, name);
  await mkdir(dir, { recursive: true });
  await writeFile(join(dir, 'manifest.json'), JSON.stringify(manifest(services)));
  return normaliseRecipe({ name, sources: [{ manifest: 'manifest.json' }], labels: { oak: [], marble: [] }, scale: { pixelsPerCanvasUnit: scale }, patch: { size: 64 }, negatives: { ratio: 1 }, request: { format: 'png' }, network: { contact: 'mailto:bench@example.org', concurrency: 4, perHost: 4, perHostRate: 1000, retries: 0 } }, join(dir, 'recipe.json'), dir);
}

const svc3 = [0, 1, 2, 3].map((i) => ({ id: `${proc.base}/3/b${i}.png`, type: 'ImageService3', profile: 'level2' }));
const rows: [string, string, string][] = [];

// 1. harvest ÷ bare fetch, same URLs, same concurrency (4), fresh cache each time.
{
  const recipe = await recipeFor('h', svc3);
  const { plan } = await planRecipe(recipe, { cacheDir: join(work, 'plan-cache') });
  const urls = [...new Set(plan.crops.flatMap((c) => c.stitch.pieces.map((p) => p.url)))];
  const ratios: number[] = [];
  for (let r = 0; r < RUNS; r++) {
    const limit = pLimit(4);
    let t = performance.now();
    await Promise.all(urls.map((u) => limit(() => got(u, { responseType: 'buffer', retry: { limit: 0 } }))));
    const bare = performance.now() - t;
    const cache = join(work, `hc-${r}`);
    const { fetcher } = { fetcher: (await planRecipe(recipe, { cacheDir: cache })).fetcher };
    t = performance.now();
    await harvestCrops(plan.crops, fetcher);
    const ours = performance.now() - t;
    ratios.push(ours / bare);
    await rm(cache, { recursive: true, force: true });
  }
  rows.push(['harvest ÷ bare fetch (same URLs, concurrency 4)', median(ratios).toFixed(3), '≤ 1.10']);
  rows.push(['  (requests per run)', String(urls.length), '']);
}

// 2. bytes fetched ÷ bytes of fetching whole images then cropping.
{
  const recipe = await recipeFor('bytes', svc3);
  const cache = join(work, 'bytes-cache');
  const { build } = await runRecipe(recipe, { cacheDir: cache });
  let whole = 0;
  for (const s of svc3) whole += (await got(`${s.id}/full/max/0/default.png`, { responseType: 'buffer' })).body.length;
  rows.push(['bytes fetched ÷ whole-image-then-crop bytes', (build.harvest.bytes / whole).toFixed(3), 'lower is better']);
}

// 3. patch cutting ÷ raw sharp extract-and-encode over the same crops (throughput ratio: raw time ÷ our time).
{
  const recipe = await recipeFor('cut', svc3);
  const cache = join(work, 'cut-cache');
  const { plan, fetcher } = await planRecipe(recipe, { cacheDir: cache });
  await harvestCrops(plan.crops, fetcher);
  const bodies = new Map<string, Buffer>();
  for (const c of plan.crops) for (const p of c.stitch.pieces) bodies.set(p.url, (await fetcher.get(p.url, 'image')).body);
  const byCrop = new Map<string, typeof plan.patches>();
  for (const p of plan.patches) byCrop.set(p.cropKey, [...(byCrop.get(p.cropKey) ?? []), p]);
  const ratios: number[] = [];
  for (let r = 0; r < RUNS; r++) {
    let t = performance.now();
    for (const c of plan.crops) {
      const { image } = await stitchCrop(c, (u) => bodies.get(u));
      for (const p of byCrop.get(c.key) ?? []) {
        const patch = extractRgb(image, p.inCrop.x, p.inCrop.y, p.inCrop.w, p.inCrop.h);
        const out = await encodePng(patch);
        sha256Hex(out);
        dHash(patch.data, patch.width, patch.height);
      }
    }
    const ours = performance.now() - t;
    t = performance.now();
    for (const c of plan.crops) {
      const body = bodies.get(c.stitch.pieces[0].url)!;
      for (const p of byCrop.get(c.key) ?? []) await sharp(body).extract({ left: p.inCrop.x, top: p.inCrop.y, width: p.inCrop.w, height: p.inCrop.h }).png().toBuffer();
    }
    const raw = performance.now() - t;
    ratios.push(raw / ours);
  }
  rows.push(['patch cutting throughput ÷ raw sharp extract+encode', median(ratios).toFixed(3), '≥ 0.8']);
}

// 4. warm rebuild: requests made, and time ÷ cold run.
{
  const reqs: number[] = [], ratios: number[] = [];
  for (let r = 0; r < RUNS; r++) {
    const recipe = await recipeFor(`warm-${r}`, [...svc3, { id: `${stat.base}/b0`, type: 'ImageService3', profile: 'level0' }]);
    const cache = join(work, `warm-cache-${r}`);
    let t = performance.now();
    await runRecipe(recipe, { cacheDir: cache });
    const cold = performance.now() - t;
    t = performance.now();
    const warm = await runRecipe(recipe, { cacheDir: cache });
    const warmMs = performance.now() - t;
    reqs.push(warm.fetcher.stats.requests);
    ratios.push(warmMs / cold);
  }
  rows.push(['warm rebuild: requests made', String(median(reqs)), '0']);
  rows.push(['warm rebuild time ÷ cold run', median(ratios).toFixed(3), '≤ 0.05']);
}

// 5. planning 1,000 vs 10,000 canvases: time and peak RSS, each in its own process.
{
  const t: number[] = [], m: number[] = [];
  for (let r = 0; r < RUNS; r++) {
    const run = (n: number) => JSON.parse(execFileSync(process.execPath, ['--import', 'tsx', join(import.meta.dirname, 'plan-scale.ts'), String(n)], { encoding: 'utf8' }));
    const a = run(1000), b = run(10000);
    t.push(b.ms / a.ms);
    m.push(b.maxRssKb / a.maxRssKb);
  }
  rows.push(['planning 10,000 ÷ 1,000 canvases: time', median(t).toFixed(2), '≤ 11'])
  rows.push(['planning 10,000 ÷ 1,000 canvases: peak RSS', median(m).toFixed(2), '≤ 1.5']);
}

// 6. whole processes of the compiled command: start-up, and harvest (start-up included) ÷ a bare fetch process.
rows.push(...(await processBenchmarks()));

await proc.stop();
await stat.stop();
await rm(work, { recursive: true, force: true });

const machine = `${cpus().length} × ${cpus()[0]?.model ?? 'cpu'}, Node ${process.version}, sharp ${sharp.versions.sharp} (libvips ${sharp.versions.vips})`;
const w = Math.max(...rows.map((r) => r[0].length));
console.log(`swatchbook benchmarks — median of ${RUNS} runs — ${machine}`);
console.log(`${'figure'.padEnd(w)}  ${'value'.padStart(8)}  target`);
for (const [a, b, c] of rows) console.log(`${a.padEnd(w)}  ${b.padStart(8)}  ${c}`);

