import { describe, expect, it } from 'vitest';
import nock from 'nock';
import { planByManifest } from '../../src/plan-by-manifest.ts';
import { planDataset, PlanCollector } from '../../src/plan/plan-dataset.ts';
import { normaliseRecipe } from '../../src/recipe/load.ts';
import { resolveSources } from '../../src/sources/resolve.ts';
import { makeFetcher, nockSandbox } from '../net/harness.ts';

// Every document is served once by nock (interceptors answer one request each): planning a manifest at a time reads
// each manifest three times and each page twice, from the cache, and must ask the servers for nothing twice.

const H = 'https://museum.example.org';
const box = nockSandbox();
const ld = (doc: unknown) => [200, JSON.stringify(doc), { 'content-type': 'application/ld+json' }] as [number, string, Record<string, string>];
const P3 = 'http://iiif.io/api/presentation/3/context.json';
const info = (id: string, w = 1600, h = 1200) => ({ '@context': 'http://iiif.io/api/image/3/context.json', id, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level1', width: w, height: h });
const canvas = (id: string, service: string, embedded: boolean, extra: Record<string, unknown> = {}) => ({
  id, type: 'Canvas', width: 800, height: 600,
  items: [{ id: `${id}/p`, type: 'AnnotationPage', items: [{ id: `${id}/paint`, type: 'Annotation', motivation: 'painting', target: id, body: { id: `${service}/full/max/0/default.jpg`, type: 'Image', service: [embedded ? info(service) : { id: service, type: 'ImageService3', profile: 'level1' }] } }] }],
  ...extra,
});
const tag = (id: string, label: string, target: string) => ({ id, type: 'Annotation', motivation: 'tagging', bodyValue: label, target });
const page = (id: string, items: unknown[]) => ({ '@context': P3, id, type: 'AnnotationPage', items });

/** Two manifests sharing a canvas id and an annotation page, an annotation bound twice, and loose annotations. */
function serve() {
  const A = `${H}/m/a`, B = `${H}/m/b`, shared = `${H}/canvas/shared`;
  const a = {
    '@context': P3, id: A, type: 'Manifest', label: { en: ['a'] },
    items: [canvas(`${H}/canvas/a1`, `${H}/iiif/a1`, false), canvas(shared, `${H}/iiif/a2`, true)],
    annotations: [
      page(`${A}/tags`, [
        tag(`${H}/anno/x`, 'oak', `${H}/canvas/a1#xywh=40,40,300,200`),
        tag(`${H}/anno/dup`, 'marble', `${shared}#xywh=100,100,400,300`),
        tag(`${H}/anno/s`, 'oak', `${H}/canvas/a1#xywh=420,300,300,250`),
        tag(`${H}/anno/comment`, 'varnish', `${H}/canvas/a1#xywh=0,500,200,100`),
      ]),
      { id: `${H}/pages/shared`, type: 'AnnotationPage' },
    ],
  };
  const b = {
    '@context': P3, id: B, type: 'Manifest', label: { en: ['b'] },
    items: [canvas(shared, `${H}/iiif/b1`, true), canvas(`${H}/canvas/b2`, `${H}/iiif/b2`, true), canvas(`${H}/canvas/b3`, `${H}/iiif/b3`, false)],
    annotations: [
      page(`${B}/tags`, [
        tag(`${H}/anno/dup`, 'oak', `${H}/canvas/b2#xywh=0,0,200,200`),
        tag(`${H}/anno/z`, 'oak', `${H}/canvas/b2#xywh=300,200,400,300`),
        tag(`${H}/anno/gone`, 'marble', `${H}/canvas/b3#xywh=10,10,300,300`),
      ]),
      { id: `${H}/pages/shared`, type: 'AnnotationPage' },
    ],
  };
  const loose = page(`${H}/loose`, [
    tag(`${H}/anno/u1`, 'marble', `${H}/canvas/b2#xywh=20,300,250,250`),
    tag(`${H}/anno/u2`, 'oak', `${shared}#xywh=500,50,250,200`),
    tag(`${H}/anno/u3`, 'oak', `${H}/canvas/nowhere#xywh=0,0,100,100`),
    tag(`${H}/anno/u4`, 'pine', `${H}/canvas/b2#xywh=0,0,100,100`),
    tag(`${H}/anno/s`, 'marble', `${H}/canvas/b2#xywh=500,400,200,150`),
    { ...tag(`${H}/anno/u5`, 'marble', ''), target: { type: 'SpecificResource', source: { id: shared, type: 'Canvas', partOf: [{ id: B, type: 'Manifest' }] }, selector: { type: 'FragmentSelector', conformsTo: 'http://www.w3.org/TR/media-frags/', value: 'xywh=50,350,300,200' } } },
  ]);
  // Open Annotation targets may say which manifest they are within (P2.1 §6.1): the shared canvas id within B is B's;
  // within a manifest that lacks the canvas, the first manifest by id with it.
  const oa = (id: string, label: string, full: string, within: string, xywh: string) => ({ '@id': `${H}/anno/${id}`, '@type': 'oa:Annotation', motivation: 'oa:tagging', resource: { '@type': 'oa:Tag', chars: label }, on: { '@type': 'oa:SpecificResource', full, within, selector: { '@type': 'oa:FragmentSelector', value: `xywh=${xywh}` } } });
  const looseP2 = { '@context': 'http://iiif.io/api/presentation/2/context.json', '@id': `${H}/loose-p2`, '@type': 'sc:AnnotationList', resources: [oa('w1', 'marble', shared, B, '50,350,300,200'), oa('w2', 'oak', `${H}/canvas/b2`, A, '450,20,300,150')] };
  return nock(H)
    .get('/loose-p2').reply(...ld(looseP2))
    .get('/m/a').reply(...ld(a))
    .get('/m/b').reply(...ld(b))
    .get('/loose').reply(...ld(loose))
    .get('/pages/shared').reply(...ld(page(`${H}/pages/shared`, [tag(`${H}/anno/y`, 'marble', `${shared}#xywh=420,320,300,250`)])))
    .get('/iiif/a1/info.json').reply(...ld(info(`${H}/iiif/a1`)))
    .get('/iiif/b3/info.json').reply(404, 'not here');
}

const recipe = (groupBy: 'canvas' | 'manifest') =>
  normaliseRecipe({ name: 'm', seed: 'by-manifest', sources: [{ manifest: `${H}/m/b` }, { annotations: `${H}/loose` }, { manifest: `${H}/m/a` }, { annotations: `${H}/loose-p2` }], labels: { oak: [], marble: [] }, scale: { pixelsPerCanvasUnit: 0.5 }, patch: { size: 16 }, negatives: { ratio: 2, margin: 2 }, split: { groupBy }, network: { perHostRate: 1000, retries: 0 } }, '/r/recipe.json', '/r');

describe('planning a manifest at a time', () => {
  for (const groupBy of ['canvas', 'manifest'] as const) {
    it(`gives the plan of all sources at once, reading each document from its server once (groupBy ${groupBy})`, async () => {
      const scope = serve();
      const { fetcher } = makeFetcher(`${box.dir}/cache`, { perHostRate: 1000 });
      const collector = new PlanCollector();
      const { sources, manifests, services: _services, ...totals } = await planByManifest(recipe(groupBy), fetcher, collector);
      expect(scope.isDone()).toBe(true); // and nothing more was asked: nock would have refused a second request
      const streamed = collector.plan(totals);
      // The same sources resolved and planned whole, from the cache the first planning filled.
      const { fetcher: offline } = makeFetcher(`${box.dir}/cache`, { mode: 'offline' });
      const whole = await resolveSources(recipe(groupBy).sources, offline);
      const expected = planDataset(recipe(groupBy), whole);
      expect(manifests).toBe(2);
      for (const k of Object.keys(expected) as (keyof typeof expected)[]) expect(JSON.stringify(streamed[k]), k).toBe(JSON.stringify(expected[k]));
      expect(JSON.stringify(streamed)).toBe(JSON.stringify(expected));
      expect(sources.documents).toEqual(whole.documents.filter((d) => d.location !== `${H}/iiif/b3/info.json`));
      expect(sources.failures.map((f) => [f.key, f.stage])).toEqual(whole.failures.filter((f) => f.stage !== 'info').map((f) => [f.key, f.stage]).concat([[`${H}/iiif/b3`, 'info']]).sort());
      expect(sources.notes).toEqual(whole.notes);
      // The scenario holds what it is meant to: a canvas id in both manifests, an id bound twice (A's copy kept),
      // a loose copy of a bound annotation (the bound one kept), loose targets on both manifests, skips of every kind.
      expect(sources.notes!.map((n) => n.kind)).toEqual(['canvas-id-shared']);
      const region = (id: string) => streamed.regions.find((r) => r.annotationId === `${H}/anno/${id}`);
      expect(region('dup')!.manifestId).toBe(`${H}/m/a`);
      expect(region('s')!.label).toBe('oak');
      expect(region('u2')!.manifestId).toBe(`${H}/m/a`);
      expect(region('y')!.manifestId).toBe(`${H}/m/a`);
      expect([region('w1')!.manifestId, region('w1')!.canvasId]).toEqual([`${H}/m/b`, `${H}/canvas/shared`]);
      expect(region('w2')!.manifestId).toBe(`${H}/m/b`);
      expect(new Set(streamed.skipped.map((s) => s.reason))).toEqual(new Set(['unknown-canvas', 'no-matching-label', 'no-image-service']));
      expect(streamed.negatives.planned).toBeGreaterThan(0);
      // Borrowing within a group happens, across the manifests that share a canvas id when groups are canvases.
      expect(streamed.negatives.borrowedWithinGroup).toBeGreaterThan(0);
      expect(streamed.patches.filter((p) => p.kind === 'negative').length).toBe(streamed.negatives.planned);
    });
  }
});
