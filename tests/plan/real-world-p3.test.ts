import { describe, expect, it } from 'vitest';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { planDataset } from '../../src/plan/plan-dataset.ts';
import { parseManifest } from '../../src/iiif/presentation.ts';
import { parseInfoJson } from '../../src/iiif/image-service.ts';
import { normaliseRecipe } from '../../src/recipe/load.ts';
import { readAnnotationDocument } from '../../src/annotation/web-annotation.ts';
import type { RegionAnnotation } from '../../src/annotation/web-annotation.ts';
import { resolveSources, type ResolvedSources } from '../../src/sources/resolve.ts';
import { intersects } from '../../src/geometry/rect.ts';
import { Fetcher } from '../../src/net/fetcher.ts';
import { ContentCache } from '../../src/net/cache.ts';

// Five shapes of Presentation 3.0 data that published manifests use; each test failed before the planner handled it.

const B = 'https://p3.example.org';
const P3 = 'http://iiif.io/api/presentation/3/context.json';
const svcDoc = (n: number, w = 800, h = 600) => ({ '@context': 'http://iiif.io/api/image/3/context.json', id: `${B}/iiif/${n}`, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level2', width: w, height: h });
const painting = (canvas: string, n: number, target: string, body: Record<string, unknown> = {}) => ({
  id: `${canvas}/paint/${n}`, type: 'Annotation', motivation: 'painting', target,
  body: { id: `${B}/iiif/${n}/full/max/0/default.jpg`, type: 'Image', service: [{ id: `${B}/iiif/${n}`, type: 'ImageService3', profile: 'level2' }], ...body },
});
const canvasDoc = (id: string, paintings: unknown[]) => ({ id, type: 'Canvas', width: 800, height: 600, items: [{ id: `${id}/page`, type: 'AnnotationPage', items: paintings }] });
const manifestDoc = (id: string, canvases: unknown[]) => ({ '@context': P3, id, type: 'Manifest', label: { en: ['m'] }, items: canvases });
const services = (...specs: [number, number?, number?][]) => new Map(specs.map(([n, w, h]) => [`${B}/iiif/${n}`, parseInfoJson(svcDoc(n, w, h), `${B}/iiif/${n}/info.json`)]));
const boxAnno = (id: string, label: string, canvas: string, xywh: string | null, manifestId?: string): RegionAnnotation => ({
  id: `${B}/anno/${id}`, source: 's', pointer: '', labels: [label], tags: [{ value: label }], motivations: ['tagging'],
  targets: [{ canvasId: canvas, selector: xywh === null ? { kind: 'whole' } : { kind: 'xywh', fragment: (() => { const [x, y, w, h] = xywh.split(',').map(Number); return { unit: 'pixel' as const, x, y, w, h }; })() }, pointer: '' }],
  ...(manifestId ? { manifestId } : {}),
});
const recipe = (extra: Record<string, unknown> = {}) =>
  normaliseRecipe({ name: 'p', seed: 'p', sources: [{ manifest: 'm' }], labels: { oak: [], marble: [] }, scale: { pixelsPerCanvasUnit: 0.5 }, patch: { size: 16 }, negatives: { ratio: 1, margin: 2 }, ...extra }, '/r/recipe.json', '/r');
const sourcesOf = (manifests: unknown[], annotations: RegionAnnotation[], svc: ResolvedSources['services']): ResolvedSources =>
  ({ manifests: manifests.map((m, i) => ({ manifest: parseManifest(m, `m${i}`), collections: [] })), annotations, services: svc, documents: [], failures: [] });

describe('real-world Presentation 3.0 shapes', () => {
  it('(1) a region on an image painted over part of a larger image is cut from the image visible there', () => {
    // Presentation 3.0 §3.4 (`items` of an AnnotationPage are in order) and §5.6: later painting annotations are
    // drawn over earlier ones, so the top image at a point is the last one whose target holds it.
    const C = `${B}/canvas/1`;
    const m = manifestDoc(`${B}/m`, [canvasDoc(C, [painting(C, 1, C), painting(C, 2, `${C}#xywh=400,0,400,300`, { width: 400, height: 300 })])]);
    const plan = planDataset(recipe(), sourcesOf([m], [boxAnno('inset', 'oak', C, '450,50,300,200'), boxAnno('ground', 'marble', C, '50,350,300,200')], services([1], [2, 400, 300])));
    const serviceOf = (annotation: string) => new Set(plan.patches.filter((p) => p.annotationId === `${B}/anno/${annotation}`).map((p) => plan.contexts[p.cropKey]!.service.id));
    expect(serviceOf('inset')).toEqual(new Set([`${B}/iiif/2`]));
    expect(serviceOf('ground')).toEqual(new Set([`${B}/iiif/1`]));
    // and the inset's crop is in the inset image's own pixels: canvas x 450 → image x 50
    const insetCrop = plan.crops.find((c) => c.key === plan.patches.find((p) => p.annotationId === `${B}/anno/inset`)!.cropKey)!;
    expect(insetCrop.stitch.pieces[0].url.startsWith(`${B}/iiif/2/50,50,300,200/`)).toBe(true);
    // negatives never sit on the inset image where it covers the ground image's area, nor on the other way round
    for (const n of plan.patches.filter((p) => p.kind === 'negative')) {
      const svc = plan.contexts[n.cropKey]!.service.id;
      if (svc === `${B}/iiif/1`) expect(intersects(n.canvasRegion, { x: 400, y: 0, w: 400, h: 300 })).toBe(false);
    }
  });

  it('(2) a rotated painting body is refused with a clear reason, never cut unrotated', () => {
    // Open Annotation extensions annex §2.1 ImageApiSelector `rotation`
    const C = `${B}/canvas/r`;
    const rotated = painting(C, 3, C);
    rotated.body = { type: 'SpecificResource', source: rotated.body, selector: { type: 'ImageApiSelector', rotation: '90' } } as never;
    const plan = planDataset(recipe(), sourcesOf([manifestDoc(`${B}/m`, [canvasDoc(C, [rotated])])], [boxAnno('r', 'oak', C, '10,10,200,200')], services([3, 600, 800])));
    expect(plan.patches).toEqual([]);
    expect(plan.skipped).toEqual([expect.objectContaining({ key: `${B}/anno/r`, reason: 'rotated-image' })]);
    expect(plan.skipped[0].detail).toMatch(/rotated by 90°/);
  });

  it('(3) tags inside a Choice body item and a SpecificResource whose source is an embedded TextualBody are read; every annotation yields regions or a counted skip', () => {
    // Web Annotation §3.2.7 (Choice), §4.1 (SpecificResource source), §3.3.5 (purpose)
    const C = `${B}/canvas/1`;
    const page = { id: `${B}/page`, type: 'AnnotationPage', items: [
      { id: `${B}/a/choice`, type: 'Annotation', motivation: 'tagging', target: `${C}#xywh=0,0,200,200`, body: { type: 'Choice', items: [{ type: 'TextualBody', value: 'oak', purpose: 'tagging', language: 'en' }, { type: 'TextualBody', value: 'chêne', language: 'fr' }] } },
      { id: `${B}/a/specific`, type: 'Annotation', motivation: 'tagging', target: `${C}#xywh=400,0,200,200`, body: { type: 'SpecificResource', purpose: 'tagging', source: { type: 'TextualBody', value: 'marble' } } },
      { id: `${B}/a/unknown`, type: 'Annotation', motivation: 'tagging', target: `${C}#xywh=0,400,100,100`, body: { type: 'Video', id: `${B}/v.mp4` } },
      { id: `${B}/a/nobody`, type: 'Annotation', motivation: 'commenting', target: `${C}#xywh=0,400,100,100`, bodyValue: 'a remark' },
    ] };
    const { value, problems } = readAnnotationDocument(page, 'page');
    expect(problems).toEqual([]);
    const byId = new Map(value.annotations.map((a) => [a.id, a]));
    // every item of a Choice is an alternative wording of the same body (§3.2.7): each may name the class
    expect(byId.get(`${B}/a/choice`)!.labels).toEqual(['oak', 'chêne']);
    expect(byId.get(`${B}/a/choice`)!.tags.map((t) => t.value)).toEqual(['oak', 'chêne']);
    expect(byId.get(`${B}/a/specific`)!.labels).toEqual(['marble']);
    const m = manifestDoc(`${B}/m`, [canvasDoc(C, [painting(C, 1, C)])]);
    const plan = planDataset(recipe(), sourcesOf([m], value.annotations, services([1])));
    const regionAnnotations = new Set(plan.regions.map((r) => r.annotationId));
    const skippedAnnotations = new Set(plan.skipped.map((s) => s.key.replace(/#\d+$/, '')));
    expect(regionAnnotations).toEqual(new Set([`${B}/a/choice`, `${B}/a/specific`]));
    expect(plan.regions.find((r) => r.annotationId === `${B}/a/choice`)!.label).toBe('oak');
    for (const a of page.items) expect(regionAnnotations.has(a.id) || skippedAnnotations.has(a.id), a.id).toBe(true);
  });

  it('(4) two manifests reusing one canvas id keep their own images; the collision is noted', async () => {
    const C = `${B}/canvas/shared`;
    const mA = manifestDoc(`${B}/mA`, [canvasDoc(C, [painting(C, 1, C)])]);
    const mB = manifestDoc(`${B}/mB`, [canvasDoc(C, [painting(C, 2, C)])]);
    const plan = planDataset(recipe(), sourcesOf([mA, mB], [boxAnno('onA', 'oak', C, '0,0,200,200', `${B}/mA`), boxAnno('onB', 'marble', C, '0,0,200,200', `${B}/mB`)], services([1], [2])));
    const of = (id: string) => new Set(plan.patches.filter((p) => p.annotationId === `${B}/anno/${id}`).map((p) => `${p.manifestId} ${plan.contexts[p.cropKey]!.service.id}`));
    expect(of('onA')).toEqual(new Set([`${B}/mA ${B}/iiif/1`]));
    expect(of('onB')).toEqual(new Set([`${B}/mB ${B}/iiif/2`]));
    // resolving the two manifests from files records the shared id as a note for the card
    const dir = await mkdtemp(join(tmpdir(), 'swatchbook-shared-'));
    try {
      await writeFile(join(dir, 'a.json'), JSON.stringify({ ...mA, items: [{ ...canvasDoc(C, [painting(C, 1, C, { service: [{ ...svcDoc(1) }] })]) }] }));
      await writeFile(join(dir, 'b.json'), JSON.stringify({ ...mB, items: [{ ...canvasDoc(C, [painting(C, 2, C, { service: [{ ...svcDoc(2) }] })]) }] }));
      const fetcher = new Fetcher({ cache: new ContentCache(join(dir, 'cache')), mode: 'offline' });
      const resolved = await resolveSources([{ kind: 'manifest', location: join(dir, 'a.json') }, { kind: 'manifest', location: join(dir, 'b.json') }], fetcher);
      expect(resolved.notes).toEqual([{ kind: 'canvas-id-shared', canvasId: C, manifests: [`${B}/mA`, `${B}/mB`] }]);
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });

  it('(5) a whole-canvas target whose label names a class keeps negatives off that canvas', () => {
    const C1 = `${B}/canvas/1`, C2 = `${B}/canvas/2`;
    const m = manifestDoc(`${B}/m`, [canvasDoc(C1, [painting(C1, 1, C1)]), canvasDoc(C2, [painting(C2, 2, C2)])]);
    const annotations = [boxAnno('oak1', 'oak', C1, '0,0,300,300'), boxAnno('oak2', 'oak', C2, '0,0,300,300'), boxAnno('all-marble', 'marble', C2, null), boxAnno('remark', 'unlabelled remark', C1, null)];
    const plan = planDataset(recipe(), sourcesOf([m], annotations, services([1], [2])));
    const negatives = plan.patches.filter((p) => p.kind === 'negative');
    expect(negatives.length).toBeGreaterThan(0);
    expect(negatives.filter((n) => n.canvasId === C2)).toEqual([]);
    // a whole-canvas annotation that names no class says nothing about where the material is: canvas 1 keeps its negatives
    expect(negatives.some((n) => n.canvasId === C1)).toBe(true);
  });
});
