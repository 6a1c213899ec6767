/**
 * Report time at scale: a synthetic dataset folder of N patches (index, card,
 * canvases, lock; every patch file a copy of one of 16 small PNGs, 250 patches
 * per canvas, no thumbnails in the cache) and the time `writeReport` takes.
 * Prints JSON. Not a test: no timing is asserted anywhere.
 *   tsx bench/report-scale.ts [N=1000]
 */
import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import sharp from 'sharp';
import { writeReport } from '../src/report/write-report.ts';
import type { IndexRecord } from '../src/dataset/records.ts';

const N = Number(process.argv[2] ?? 1000);
const PER_CANVAS = 250;
const classes = ['background', 'gilding', 'graining', 'marbling'];
const dir = await mkdtemp(join(tmpdir(), 'swatchbook-report-scale-'));
const ds = join(dir, 'big-dataset');
const pngs = await Promise.all(Array.from({ length: 16 }, (_, k) => sharp({ create: { width: 48, height: 48, channels: 3, background: { r: 40 + k * 12, g: 90, b: 200 - k * 9 } } }).png().toBuffer()));
const records: IndexRecord[] = [];
const t0 = performance.now();
for (let i = 0; i < N; i++) {
  const label = classes[i % 4]!, split = (['train', 'train', 'train', 'train', 'train', 'val', 'test'] as const)[i % 7]!;
  const id = i.toString(16).padStart(16, '0');
  const c = Math.floor(i / PER_CANVAS);
  const file = `patches/${split}/${label}/${id}.png`;
  records.push({
    id, split, label, kind: label === 'background' ? 'negative' : 'positive', file, sha256: '0'.repeat(64), phash: '0'.repeat(16), coverage: 1, group: `canvas:${c}`,
    manifest: `https://museum.example.org/m/${c % 10}`, collections: [], canvas: `https://museum.example.org/c/${c}`, annotation: null, annotator: `annotator ${i % 3}`, sourceLabel: null, tags: [], bodyChoice: null,
    service: { id: `https://images.example.org/iiif/${c}`, version: 3, level: 2 }, requests: [`https://images.example.org/iiif/${c}/0,0,48,48/48,48/0/default.png`], responses: [],
    canvasRegion: { x: (i % PER_CANVAS % 20) * 50, y: Math.floor((i % PER_CANVAS) / 20) * 50, w: 48, h: 48 }, imageRegion: { x: 0, y: 0, w: 48, h: 48 },
    scale: { pixelsPerCanvasUnit: 1, basis: 'canvas', mmPerCanvasUnit: null }, crop: 'k', rights: 'http://creativecommons.org/publicdomain/zero/1.0/', requiredStatement: null, provider: [], logos: [], partOf: [],
  } as IndexRecord);
}
for (const d of new Set(records.map((r) => join(ds, r.file, '..')))) await mkdir(d, { recursive: true });
for (const [i, r] of records.entries()) await writeFile(join(ds, r.file), pngs[i % 16]!);
const canvases = [...new Set(records.map((r) => r.canvas))].map((canvas, i) => ({
  manifest: `https://museum.example.org/m/${i % 10}`, canvas, index: Math.floor(i / 10), label: `board ${i}`, width: 1000, height: 700, painted: { x: 0, y: 0, w: 1000, h: 700 },
  service: { id: `https://images.example.org/iiif/${i}`, version: 3, level: 2 }, thumbnail: null,
  regions: [{ annotation: `a${i}`, label: 'gilding', shape: { kind: 'rect', rect: { x: 10, y: 10, w: 400, h: 300 } } }],
}));
await writeFile(join(ds, 'index.jsonl'), records.map((r) => JSON.stringify(r)).join('\n') + '\n');
await writeFile(join(ds, 'canvases.json'), JSON.stringify(canvases));
await writeFile(join(ds, 'card.json'), JSON.stringify({ name: 'big', composition: { classes, targetFractions: { train: 0.7, val: 0.15, test: 0.15 }, nearDuplicates: { pairs: 0, mergedGroups: 0, examples: [] } }, collection: { seed: 'bench' } }));
await writeFile(join(ds, 'lock.json'), JSON.stringify({ lockVersion: 1, entries: {} }));
await writeFile(join(ds, 'skipped.jsonl'), '');
await writeFile(join(ds, 'failures.jsonl'), '');
const setup = performance.now() - t0;
const t = performance.now();
const r = await writeReport(ds, { cacheDir: join(dir, 'no-cache') });
const ms = performance.now() - t;
await rm(dir, { recursive: true, force: true });
console.log(JSON.stringify({ patches: N, canvases: canvases.length, reportMs: Math.round(ms), setupMs: Math.round(setup), tiles: r.tiles, mapsDrawn: r.maps, outlines: r.footprints }));
