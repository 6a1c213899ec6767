/**
 * Child process for the planning benchmark: builds a synthetic manifest of N
 * canvases (embedded service descriptions, one rectangle each), plans it, and
 * prints the time and peak RSS as JSON. No network.
 */
import { performance } from 'node:perf_hooks';
import { parseManifest } from '../src/iiif/presentation.ts';
import { parseInfoJson } from '../src/iiif/image-service.ts';
import { planDataset } from '../src/plan/plan-dataset.ts';
import { normaliseRecipe } from '../src/recipe/load.ts';
import type { ResolvedSources } from '../src/sources/resolve.ts';
import type { RegionAnnotation } from '../src/annotation/web-annotation.ts';

const n = Number(process.argv[2] ?? 1000);
const B = 'https://bench.example.org';
const canvases = [];
const annotations: RegionAnnotation[] = [];
const services = new Map();
for (let i = 0; i < n; i++) {
  const svcId = `${B}/iiif/${i}`;
  const info = { '@context': 'http://iiif.io/api/image/3/context.json', id: svcId, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level1', width: 2000, height: 1500 };
  canvases.push({ id: `${B}/canvas/${i}`, type: 'Canvas', width: 2000, height: 1500, items: [{ id: `${B}/canvas/${i}/p`, type: 'AnnotationPage', items: [{ id: `${B}/canvas/${i}/a`, type: 'Annotation', motivation: 'painting', target: `${B}/canvas/${i}`, body: { id: `${svcId}/full/max/0/default.jpg`, type: 'Image', service: [info] } }] }] });
  services.set(svcId, parseInfoJson(info, `${svcId}/info.json`));
  annotations.push({ id: `${B}/anno/${i}`, source: 'bench', pointer: '', labels: [i % 2 ? 'oak' : 'marble'], tags: [{ value: i % 2 ? 'oak' : 'marble' }], motivations: ['tagging'], targets: [{ canvasId: `${B}/canvas/${i}`, selector: { kind: 'xywh', fragment: { unit: 'pixel', x: 200, y: 200, w: 600, h: 400 } }, pointer: '' }] });
}
const mem = (l: string) => { (globalThis as any).gc?.(); console.error(l, Math.round(process.memoryUsage().heapUsed/2**20), "MB heap"); };
mem("input");
const t0 = performance.now();
const manifest = parseManifest({ '@context': 'http://iiif.io/api/presentation/3/context.json', id: `${B}/m`, type: 'Manifest', items: canvases }, 'bench');
const sources: ResolvedSources = { manifests: [{ manifest, collections: [] }], annotations, services, documents: [], failures: [] };
const recipe = normaliseRecipe({ name: 'bench', sources: [{ manifest: 'm' }], labels: { oak: [], marble: [] }, scale: { pixelsPerCanvasUnit: 0.25 }, patch: { size: 32 } }, '/bench/r.json', '/bench');
mem("parsed"); const plan = planDataset(recipe, sources); mem("planned");
const ms = performance.now() - t0;
process.stdout.write(JSON.stringify({ n, ms, patches: plan.patches.length, crops: plan.crops.length, maxRssKb: process.resourceUsage().maxRSS }));
