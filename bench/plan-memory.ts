/**
 * Memory of planning at scale, as a user runs it: N canvases in manifests of 100
 * canvases (local files, image services described in the manifests, one tagging
 * annotation per canvas embedded in it; 2000×1500 canvases at 0.25 px per unit,
 * 32-px patches and negatives at ratio 1: about 12 patches and 5 crops per
 * canvas), planned by the compiled `swatchbook plan --shards 1 --out-plan`, a
 * child process under /usr/bin/time. Prints wall time and peak RSS as JSON. No
 * network; not a test.
 *
 *   npm run build && tsx bench/plan-memory.ts 10000 100000
 */
import { spawn } from 'node:child_process';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

const BIN = resolve(import.meta.dirname, '../bin/swatchbook.js');
const PER_MANIFEST = 100;
const B = 'https://bench.example.org';

async function writeSources(dir: string, n: number): Promise<string> {
  const manifests: string[] = [];
  for (let m = 0; m * PER_MANIFEST < n; m++) {
    const items = [];
    for (let i = m * PER_MANIFEST; i < Math.min(n, (m + 1) * PER_MANIFEST); i++) {
      const svc = { '@context': 'http://iiif.io/api/image/3/context.json', id: `${B}/iiif/${i}`, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level1', width: 2000, height: 1500 };
      const c = `${B}/canvas/${i}`;
      items.push({
        id: c, type: 'Canvas', width: 2000, height: 1500,
        items: [{ id: `${c}/p`, type: 'AnnotationPage', items: [{ id: `${c}/a`, type: 'Annotation', motivation: 'painting', target: c, body: { id: `${svc.id}/full/max/0/default.jpg`, type: 'Image', service: [svc] } }] }],
        annotations: [{ id: `${c}/t`, type: 'AnnotationPage', items: [{ id: `${c}/t/1`, type: 'Annotation', motivation: 'tagging', bodyValue: i % 2 ? 'oak' : 'marble', target: `${c}#xywh=200,200,600,400` }] }],
      });
    }
    const file = `m${m}.json`;
    await writeFile(join(dir, file), JSON.stringify({ '@context': 'http://iiif.io/api/presentation/3/context.json', id: `${B}/m/${m}`, type: 'Manifest', label: { en: [`bench ${m}`] }, items }));
    manifests.push(file);
  }
  const recipe = { name: 'plan-memory', seed: 'bench', sources: manifests.map((manifest) => ({ manifest })), labels: { oak: [], marble: [] }, scale: { pixelsPerCanvasUnit: 0.25 }, patch: { size: 32 }, negatives: { ratio: 1 } };
  await writeFile(join(dir, 'recipe.json'), JSON.stringify(recipe));
  return join(dir, 'recipe.json');
}

const results = [];
for (const n of process.argv.slice(2).map(Number)) {
  const dir = await mkdtemp(join(process.env.BENCH_DIR ?? tmpdir(), 'swatchbook-bench-plan-'));
  try {
    const recipe = await writeSources(dir, n);
    const r = await new Promise<{ wallS: number; maxRssKb: number; code: number | null; stderr: string }>((done) => {
      const child = spawn('/usr/bin/time', ['-f', 'TIME %e %M', process.execPath, BIN, 'plan', recipe, '--shards', '1', '--out-plan', join(dir, 'plan'), '--cache', join(dir, 'cache'), '--json'], { stdio: ['ignore', 'ignore', 'pipe'] });
      let stderr = '';
      child.stderr.on('data', (d) => (stderr += d));
      child.on('close', (code) => {
        const m = /TIME ([\d.]+) (\d+)/.exec(stderr);
        done({ wallS: m ? Number(m[1]) : NaN, maxRssKb: m ? Number(m[2]) : NaN, code, stderr: stderr.slice(-1500) });
      });
    });
    const shards = r.code === 0 ? JSON.parse(await readFile(join(dir, 'plan', 'shards.json'), 'utf8')) : [];
    const result = { canvases: n, manifests: Math.ceil(n / PER_MANIFEST), crops: shards[0]?.crops, exit: r.code, wallS: r.wallS, peakRssMb: Math.round(r.maxRssKb / 1024), ...(r.code ? { stderr: r.stderr } : {}) };
    results.push(result);
    console.log(JSON.stringify(result));
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
if (results.length === 2) console.log(JSON.stringify({ peakRssRatio: Math.round((results[1].peakRssMb / results[0].peakRssMb) * 100) / 100 }));
