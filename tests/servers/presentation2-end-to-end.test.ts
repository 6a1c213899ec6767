import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { startDemoServer, DemoServer } from '../../src/demo/server.ts';
import { normaliseRecipe } from '../../src/recipe/load.ts';
import { runRecipe } from '../../src/pipeline.ts';
import { parseIndex } from '../../src/dataset/records.ts';
import type { RgbImage } from '../../src/image/pixels.ts';
import { patchError, truthImage } from './ground-truth.ts';

// A Presentation 2.1 manifest with Open Annotation lists, painting an Image API 1.1 level-1 service, harvested from a
// real HTTP server on 127.0.0.1 (the demo's server: the 1.1 syntax checked and translated onto iiif-processor);
// every patch is compared with the source pixels of the image region its index record claims.

const W = 1200, H = 900;
const TOL = { exact: 0, resampled: 4 }; // mean absolute difference per channel; 4 for box-filter resampling (common practice)
let work: string;
let src: RgbImage;
let server: DemoServer;
const documents = new Map<string, unknown>();

/** The P2.1 documents (P2.1 §5.1–§5.5; Open Annotation shapes of facts C1, C2, C9, C12, C13). */
function p2Documents(base: string): void {
  const C = `${base}/p2/canvas/1`;
  const service = `${base}/iiif/1/truth.png`;
  documents.set('p2/manifest.json', {
    '@context': 'http://iiif.io/api/presentation/2/context.json',
    '@id': `${base}/p2/manifest.json`,
    '@type': 'sc:Manifest',
    label: [{ '@value': 'vérité', '@language': 'fr' }, { '@value': 'truth', '@language': 'en' }],
    license: 'https://creativecommons.org/publicdomain/zero/1.0/',
    attribution: '<b>Example</b> archive',
    sequences: [{
      '@type': 'sc:Sequence',
      canvases: [{
        '@id': C, '@type': 'sc:Canvas', label: 'p. 1', width: W / 2, height: H / 2, // half the image, as P2.1 §5.3 recommends for small images
        images: [{ '@type': 'oa:Annotation', motivation: 'sc:painting', on: C, resource: {
          '@id': `${service}/full/full/0/native.jpg`, '@type': 'dctypes:Image', width: W, height: H,
          service: { '@context': ' http://library.stanford.edu/iiif/image-api/1.1/context.json', '@id': `${service}/`, profile: 'http://library.stanford.edu/iiif/image-api/1.1/compliance.html#level1' },
        } }],
        otherContent: [`${base}/p2/list/1.json`],
      }],
    }],
  });
  const svg = (points: string) => `<svg xmlns='http://www.w3.org/2000/svg'><path d='M${points}z'/></svg>`;
  documents.set('p2/list/1.json', {
    '@context': 'http://iiif.io/api/presentation/2/context.json',
    '@id': `${base}/p2/list/1.json`,
    '@type': 'sc:AnnotationList',
    resources: [
      { '@id': `${base}/p2/anno/rect`, '@type': 'oa:Annotation', motivation: ['oa:tagging', 'oa:commenting'], on: `${C}#xywh=50,50,200,150`, resource: [{ '@type': 'oa:Tag', chars: 'oak' }, { '@type': 'dctypes:Text', format: 'text/html', chars: '<p>straight grain</p>' }] },
      { '@id': `${base}/p2/anno/decimal`, '@type': 'oa:Annotation', motivation: 'oa:commenting', on: { '@type': 'oa:SpecificResource', full: C, selector: { '@type': 'oa:FragmentSelector', value: 'xywh=250.25,200.5,320.75,219.5' } }, resource: { '@type': 'dctypes:Text', chars: 'oak' } },
      { '@id': `${base}/p2/anno/dual`, '@type': 'oa:Annotation', motivation: 'oa:commenting', on: [{ '@type': 'oa:SpecificResource', full: C, selector: { '@type': 'oa:Choice', default: { '@type': 'oa:FragmentSelector', value: 'xywh=300,30,260,150' }, item: { '@type': 'oa:SvgSelector', value: svg('300,30L560,30L300,180') } } }], resource: { '@type': ['dctypes:Text', 'cnt:ContentAsText'], chars: 'marble' } },
    ],
  });
}

beforeAll(async () => {
  work = await mkdtemp(join(tmpdir(), 'swatchbook-p2-'));
  src = truthImage(W, H);
  await mkdir(join(work, 'site', 'images'), { recursive: true });
  await writeFile(join(work, 'site', 'images', 'truth.png'), await sharp(src.data, { raw: { width: W, height: H, channels: 3 } }).png().toBuffer());
  server = await startDemoServer(join(work, 'site'), documents, 0);
  p2Documents(server.base);
}, 60_000);

afterAll(async () => {
  await server?.close();
  await rm(work, { recursive: true, force: true });
});

async function harvest(name: string, pixelsPerCanvasUnit: number) {
  const dir = join(work, name);
  await mkdir(dir, { recursive: true });
  const recipe = normaliseRecipe({
    name, seed: 'p2', sources: [{ manifest: `${server.base}/p2/manifest.json` }], labels: { oak: [], marble: [] },
    scale: { pixelsPerCanvasUnit }, patch: { size: 32, stride: 32, minCoverage: 0.9 }, negatives: { ratio: 0.5, margin: 4 },
    request: { format: 'png' }, network: { contact: 'mailto:tests@example.org', perHostRate: 1000, perHost: 4, retries: 1 },
  }, join(dir, 'recipe.json'), dir);
  const { build } = await runRecipe(recipe, { cacheDir: join(dir, 'cache') });
  const records = parseIndex(await readFile(join(recipe.output, 'index.jsonl'), 'utf8'));
  const errors = await Promise.all(records.map(async (r) => patchError(await readFile(join(recipe.output, r.file)), r.imageRegion, src)));
  return { build, records, worst: Math.max(...errors) };
}

describe('Presentation 2.1 + Open Annotation + Image API 1.1 level 1, from a local server', () => {
  it('at the image\'s native scale: every patch equals its claimed image region exactly', async () => {
    const r = await harvest('native', 2);
    expect(r.build.failures).toBe(0);
    expect(new Set(r.records.filter((x) => x.kind === 'positive').map((x) => x.annotation))).toEqual(new Set(['rect', 'decimal', 'dual'].map((a) => `${server.base}/p2/anno/${a}`)));
    expect(r.records.every((x) => x.service.version === 1 && x.service.level === 1)).toBe(true);
    // Image API 1.1 syntax: pixel region, a level-1 size, `native` quality (1.1 §4.4)
    expect(r.records.every((x) => x.requests.every((u) => /\/iiif\/1\/truth\.png\/\d+,\d+,\d+,\d+\/(full|\d+,)\/0\/native\.png$/.test(u)))).toBe(true);
    // P2 license with https → the http rights URI; attribution's HTML stripped (P3 §3.1; P2.1 §4.4)
    expect(new Set(r.records.map((x) => x.rights))).toEqual(new Set(['http://creativecommons.org/publicdomain/zero/1.0/']));
    expect(r.records[0].requiredStatement).toEqual({ label: 'Attribution', value: 'Example archive' });
    const rect = r.records.find((x) => x.annotation === `${server.base}/p2/anno/rect`)!;
    expect(rect.tags).toEqual([{ value: 'oak', purpose: 'tagging', language: null, raw: null }, { value: 'straight grain', purpose: null, language: null, raw: '<p>straight grain</p>' }]);
    console.log(`P2 + Image API 1.1 native: ${r.records.length} patches, worst patch MAD ${r.worst.toFixed(3)}`);
    expect(r.worst).toBe(TOL.exact);
  }, 120_000);

  it('at half the native scale (resampled): within the resampling tolerance', async () => {
    const r = await harvest('half', 1);
    expect(r.build.failures).toBe(0);
    expect(r.records.length).toBeGreaterThan(10);
    console.log(`P2 + Image API 1.1 half scale: ${r.records.length} patches, worst patch MAD ${r.worst.toFixed(3)}`);
    expect(r.worst).toBeLessThanOrEqual(TOL.resampled);
  }, 120_000);

  it('the level-1 server refuses what level 1 does not implement, so the planner must not ask for it', async () => {
    // Image API 1.1 compliance: w,h sizes are level 2; `default` is not a 1.1 quality
    const status = async (path: string) => (await fetch(`${server.base}/iiif/1/truth.png/${path}`)).status;
    expect(await status('0,0,100,100/50,50/0/native.png')).toBe(501);
    expect(await status('0,0,100,100/50,/0/default.png')).toBe(501);
    expect(await status('0,0,100,100/50,/0/native.png')).toBe(200);
  });
});
