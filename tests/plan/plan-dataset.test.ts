import { describe, expect, it } from 'vitest';
import { planDataset } from '../../src/plan/plan-dataset.ts';
import { parseManifest } from '../../src/iiif/presentation.ts';
import { parseInfoJson } from '../../src/iiif/image-service.ts';
import { normaliseRecipe } from '../../src/recipe/load.ts';
import type { RegionAnnotation } from '../../src/annotation/web-annotation.ts';
import type { ResolvedSources } from '../../src/sources/resolve.ts';
import { intersects } from '../../src/geometry/rect.ts';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PLAN_DIR_VERSION, PLAN_FILE, PlanFolder, planFolderLines, readPlanFolder } from '../../src/shard/shard-run.ts';

const B = 'https://plan.example.org';
function sources(annotations: RegionAnnotation[]): ResolvedSources {
  const svc = (n: number) => ({ '@context': 'http://iiif.io/api/image/3/context.json', id: `${B}/iiif/${n}`, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level2', width: 800, height: 600 });
  const canvas = (n: number) => ({ id: `${B}/canvas/${n}`, type: 'Canvas', width: 800, height: 600, items: [{ id: `${B}/canvas/${n}/p`, type: 'AnnotationPage', items: [{ id: `${B}/canvas/${n}/a`, type: 'Annotation', motivation: 'painting', target: `${B}/canvas/${n}`, body: { id: `${B}/iiif/${n}/full/max/0/default.jpg`, type: 'Image', service: [{ id: `${B}/iiif/${n}`, type: 'ImageService3', profile: 'level2' }] } }] }] });
  const manifest = parseManifest({ '@context': 'http://iiif.io/api/presentation/3/context.json', id: `${B}/m`, type: 'Manifest', items: [canvas(1), canvas(2)] }, 'm');
  return { manifests: [{ manifest, collections: [] }], annotations, services: new Map([1, 2].map((n) => [`${B}/iiif/${n}`, parseInfoJson(svc(n), `${B}/iiif/${n}/info.json`)])), documents: [], failures: [] };
}
const rect = (n: number, x: number, y: number, w: number, h: number) => ({ canvasId: `${B}/canvas/${n}`, selector: { kind: 'xywh' as const, fragment: { unit: 'pixel' as const, x, y, w, h } }, pointer: '' });
const anno = (id: string, label: string, targets: RegionAnnotation['targets'], group?: string): RegionAnnotation => ({ id: `${B}/anno/${id}`, source: 's', pointer: '', labels: [label], tags: [{ value: label }], motivations: ['tagging'], targets, ...(group ? { group } : {}) });
const recipe = (groupBy: 'canvas' | 'annotation' | 'manifest', extra: Record<string, unknown> = {}) =>
  normaliseRecipe({ name: 'p', seed: 'p', sources: [{ manifest: 'm' }], labels: { oak: [], marble: [] }, scale: { pixelsPerCanvasUnit: 0.5 }, patch: { size: 32 }, negatives: { ratio: 1, margin: 6 }, split: { groupBy }, ...extra }, '/r/recipe.json', '/r');

describe('planning a dataset (pure)', () => {
  const annotations = [
    // one object interrupted by another: one annotation, two targets
    anno('split-oak', 'oak', [rect(1, 0, 0, 300, 200), rect(1, 400, 0, 300, 200)]),
    anno('marble', 'marble', [rect(1, 0, 300, 300, 200)]),
    anno('s1', 'oak', [rect(2, 0, 0, 200, 200)], 'panel-9'),
    anno('s2', 'marble', [rect(2, 400, 300, 200, 200)], 'panel-9'),
  ];
  it('groups by annotation: all targets of one annotation form one group; sheet groups win', () => {
    const plan = planDataset(recipe('annotation'), sources(annotations));
    const groupsOf = (id: string) => new Set(plan.patches.filter((p) => p.annotationId === `${B}/anno/${id}` && p.kind === 'positive').map((p) => p.group));
    expect(groupsOf('split-oak')).toEqual(new Set([`annotation:${B}/anno/split-oak`]));
    expect(plan.patches.filter((p) => p.regionKey?.startsWith(`${B}/anno/split-oak#`)).map((p) => p.regionKey).filter((v, i, a) => a.indexOf(v) === i).sort()).toEqual([`${B}/anno/split-oak#0`, `${B}/anno/split-oak#1`]);
    expect(groupsOf('s1')).toEqual(new Set(['sheet:panel-9']));
    expect(groupsOf('s2')).toEqual(new Set(['sheet:panel-9']));
  });
  it('negatives: the planned count, on canvases with positives, clear of every region by the margin, grouped with their canvas', () => {
    const plan = planDataset(recipe('canvas'), sources(annotations));
    const positives = plan.patches.filter((p) => p.kind === 'positive');
    const negatives = plan.patches.filter((p) => p.kind === 'negative');
    expect(negatives.length).toBe(Math.round(positives.length / 2)); // ratio 1 × positives of the average of 2 classes
    expect(plan.negatives).toMatchObject({ wanted: negatives.length, shortfall: 0 });
    for (const n of negatives) {
      expect(n.group).toBe(`canvas:${n.canvasId}`);
      const m = 6 / 0.5; // margin in output px → canvas units
      const grown = { x: n.canvasRegion.x - m, y: n.canvasRegion.y - m, w: n.canvasRegion.w + 2 * m, h: n.canvasRegion.h + 2 * m };
      for (const r of plan.regions.filter((x) => x.canvasId === n.canvasId)) expect(intersects(grown, r.bounds)).toBe(false);
    }
    for (const p of positives) expect(p.coverage).toBeGreaterThanOrEqual(0.9);
    // the same plan twice is the same plan
    expect(planDataset(recipe('canvas'), sources(annotations)).patches).toEqual(plan.patches);
  });
  it('skips a region too small for one patch, with its reason', () => {
    const plan = planDataset(recipe('canvas'), sources([...annotations, anno('tiny', 'oak', [rect(2, 700, 50, 40, 40)])]));
    expect(plan.skipped).toEqual([{ key: `${B}/anno/tiny`, reason: 'too-small-for-a-patch', detail: 'the region is 20×20 px at this scale, smaller than one 32-px patch on the grid' }]);
  });
  it('the plan is plain JSON: it survives serialisation unchanged (what sharding needs)', () => {
    const plan = planDataset(recipe('annotation'), sources(annotations));
    const text = JSON.stringify(plan);
    expect(JSON.parse(text)).toEqual(plan);
    expect(text).not.toMatch(/\{\}/); // no Map or Set flattened into an empty object
    expect(Object.keys(plan.contexts)).toEqual(plan.crops.map((c) => c.key));
  });
  it('a plan folder (plan.jsonl, a line per crop, patch, region, skip and context) reads back as the same plan, key order included', async () => {
    const plan = planDataset(recipe('annotation'), sources([...annotations, anno('tiny', 'oak', [rect(2, 700, 50, 40, 40)])]));
    const folder: PlanFolder = { version: PLAN_DIR_VERSION, recipeFile: '/r/recipe.json', shards: [], plan, sources: { failures: [], notes: [], documents: [] }, lockFacts: [], trustedHosts: ['127.0.0.1'] };
    const lines = [...planFolderLines(folder)];
    expect(lines.length).toBe(1 + plan.crops.length + plan.patches.length + plan.regions.length + plan.skipped.length + Object.keys(plan.contexts).length);
    const dir = await mkdtemp(join(tmpdir(), 'swatchbook-plan-folder-'));
    try {
      await writeFile(join(dir, PLAN_FILE), lines.join(''));
      const back = await readPlanFolder(dir);
      expect(JSON.stringify(back)).toBe(JSON.stringify(folder));
      await writeFile(join(dir, PLAN_FILE), lines[0]!.replace(`"version":${PLAN_DIR_VERSION}`, '"version":1'));
      await expect(readPlanFolder(dir)).rejects.toThrow(new RegExp(`version 1, this swatchbook reads ${PLAN_DIR_VERSION}`));
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });
  it('negative positions do not depend on input order', () => {
    const a = planDataset(recipe('canvas'), sources(annotations));
    const b = planDataset(recipe('canvas'), sources([...annotations].reverse()));
    expect(b.patches).toEqual(a.patches);
    expect(b.crops.map((c) => c.key)).toEqual(a.crops.map((c) => c.key));
  });
});
