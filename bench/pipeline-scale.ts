/**
 * The whole pipeline at scale: N canvases of 2048×2048 noise texture (JPEG, a
 * different image each), one region over each whole canvas, 32-px patches at
 * stride 32 (4,096 positives per canvas, so 245 canvases plan 1,003,520 patches),
 * served by iiif-processor on 127.0.0.1. Runs the compiled `swatchbook run`
 * (without probe and report) as a child under /usr/bin/time and prints its wall
 * time, peak RSS and the dataset's counts as JSON. Not a test.
 *
 *   npm run build && tsx bench/pipeline-scale.ts 245
 */
import { spawn } from 'node:child_process';
import { mkdir, mkdtemp, rm, stat, writeFile } from 'node:fs/promises';
import { forEachLine } from '../src/util/text-file.ts';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import sharp from 'sharp';
import { startProcessorServer } from './servers.ts';

const N = Number(process.argv[2] ?? 25);
const SIDE = 2048;
const BIN = resolve(import.meta.dirname, '../bin/swatchbook.js');
const work = await mkdtemp(join(process.env.BENCH_DIR ?? tmpdir(), 'swatchbook-bench-pipeline-'));
await mkdir(join(work, 'images'));
for (let i = 0; i < N; i++) {
  await sharp({ create: { width: SIDE, height: SIDE, channels: 3, background: { r: 120, g: 100, b: 80 }, noise: { type: 'gaussian', mean: 128, sigma: 48 } } })
    .jpeg({ quality: 90 })
    .toFile(join(work, 'images', `t${i}.jpg`));
}
const server = await startProcessorServer(join(work, 'images'));
const B = 'https://bench.example.org';
const manifest = {
  '@context': 'http://iiif.io/api/presentation/3/context.json', id: `${B}/m`, type: 'Manifest', label: { en: ['pipeline scale'] },
  items: Array.from({ length: N }, (_, i) => ({
    id: `${B}/c/${i}`, type: 'Canvas', width: SIDE, height: SIDE,
    items: [{ id: `${B}/c/${i}/p`, type: 'AnnotationPage', items: [{ id: `${B}/c/${i}/a`, type: 'Annotation', motivation: 'painting', target: `${B}/c/${i}`, body: { id: `${server.base}/3/t${i}.jpg/full/max/0/default.jpg`, type: 'Image', service: [{ id: `${server.base}/3/t${i}.jpg`, type: 'ImageService3', profile: 'level2' }] } }] }],
    annotations: [{ id: `${B}/c/${i}/t`, type: 'AnnotationPage', items: [{ id: `${B}/c/${i}/t/1`, type: 'Annotation', motivation: 'tagging', bodyValue: i % 2 ? 'oak' : 'walnut', target: `${B}/c/${i}#xywh=0,0,${SIDE},${SIDE}` }] }],
  })),
};
const recipe = {
  name: 'pipeline-scale', seed: 'scale-1', sources: [{ manifest: 'manifest.json' }], labels: { oak: [], walnut: [] },
  scale: { pixelsPerCanvasUnit: 1 }, patch: { size: 32, stride: 32 }, negatives: { ratio: 0 }, request: { format: 'jpg' },
  network: { contact: 'mailto:bench@example.org', concurrency: 4, perHost: 4, perHostRate: 1000, retries: 1 },
};
await writeFile(join(work, 'manifest.json'), JSON.stringify(manifest));
await writeFile(join(work, 'recipe.json'), JSON.stringify(recipe));

const result = await new Promise<{ wallS: number; maxRssKb: number; code: number | null; stderr: string; stdout: string }>((done) => {
  const child = spawn('/usr/bin/time', ['-f', 'TIME %e %M', process.execPath, ...(process.env.BENCH_PROFILE ? ['--cpu-prof', '--cpu-prof-dir', process.env.BENCH_PROFILE] : []), BIN, 'run', join(work, 'recipe.json'), '--out', join(work, 'dataset'), '--cache', join(work, 'cache'), '--no-probe', '--no-report', '--json'], { stdio: ['ignore', 'pipe', 'pipe'] });
  let stderr = '';
  let stdout = '';
  child.stdout.on('data', (d) => (stdout += d));
  child.stderr.on('data', (d) => (stderr += d));
  child.on('close', (code) => {
    const m = /TIME ([\d.]+) (\d+)/.exec(stderr);
    done({ wallS: m ? Number(m[1]) : NaN, maxRssKb: m ? Number(m[2]) : NaN, code, stderr: stderr.slice(-2000), stdout });
  });
});
await server.stop();
// The index is read a line at a time (a million patches' index is more text than one string holds).
let patches = 0;
let indexBytes = 0;
try {
  indexBytes = (await stat(join(work, 'dataset', 'index.jsonl'))).size;
  await forEachLine(join(work, 'dataset', 'index.jsonl'), () => patches++);
} catch {
  // no dataset: the run failed; its stderr is printed
}
let summary: unknown;
try {
  summary = JSON.parse(result.stdout);
} catch {
  summary = result.stdout.slice(-500);
}
console.log(JSON.stringify({ canvases: N, plannedPositives: N * (SIDE / 32) ** 2, patchesInIndex: patches, indexMb: Math.round(indexBytes / 2 ** 20), exit: result.code, wallS: result.wallS, peakRssMb: Math.round(result.maxRssKb / 1024), summary, ...(result.code ? { stderr: result.stderr } : {}) }));
// A failed run leaves its folder (cache with the cut results, the partial dataset) for a look or a warm rerun.
if (!process.env.BENCH_KEEP && result.code === 0) await rm(work, { recursive: true, force: true });
else console.log(JSON.stringify({ kept: work }));
