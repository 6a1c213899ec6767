import type { Rect } from '../geometry/rect.ts';
import { intersects, tidyRect } from '../geometry/rect.ts';
import { integralOf, rasterise } from '../geometry/mask.ts';
import { Placement, canvasToImage } from '../geometry/placement.ts';
import type { ImageService } from '../iiif/image-service.ts';
import { mergeProvenance, PaintedImage, Provenance } from '../iiif/presentation.ts';
import { CanvasContext, extractRegions, labelIndex, Region, SkippedRegion } from '../annotation/regions.ts';
import type { Recipe } from '../recipe/types.ts';
import type { ManifestEntry, ResolvedSources } from '../sources/resolve.ts';
import { byString, seededUnit, stableId } from '../util/hash.ts';
import type { CropRequest } from './crop-request.ts';
import { PlanError, planCrop } from './plan-crop.ts';
import { innerOutputBox, ResolvedScale, resolveScale } from './scale.ts';

/** One patch to cut, planned in canvas coordinates before any fetch. */
export interface PatchPlan {
  id: string;
  label: string;
  kind: 'positive' | 'negative';
  /** The group before near-duplicate merging. */
  group: string;
  manifestId: string;
  canvasId: string;
  annotationId?: string;
  annotator?: string;
  rawLabel?: string;
  regionKey?: string;
  cropKey: string;
  /** Where the patch lies inside its crop's output image. */
  inCrop: Rect;
  /** Footprint on the canvas-anchored output grid, in canvas units and in full-image pixels. */
  canvasRegion: Rect;
  imageRegion: Rect;
  coverage: number;
}

export interface CropContext {
  manifestId: string;
  canvasId: string;
  service: ImageService;
  scale: ResolvedScale;
  provenance: Provenance;
  collections: string[];
  choice?: { chosen: string; of: number };
}

export type PlanSkipReason =
  | SkippedRegion['reason']
  | 'not-painted'
  | 'no-image-service'
  | 'no-physical-scale'
  | 'rights-excluded'
  | 'unplannable'
  | 'too-small-for-a-patch'
  | 'no-patch-meets-coverage';

export interface PlanSkip {
  key: string;
  reason: PlanSkipReason;
  detail: string;
}

export interface DatasetPlan {
  crops: CropRequest[];
  patches: PatchPlan[];
  contexts: Map<string, CropContext>;
  regions: Region[];
  skipped: PlanSkip[];
  negatives: { wanted: number; planned: number; borrowedWithinGroup: number; shortfall: number };
  rightsExcluded: { manifestId: string; rights: string }[];
}

/** The group a region belongs to before near-duplicate merging. */
export function groupOf(region: Pick<Region, 'manifestId' | 'canvasId' | 'annotationId' | 'group'>, by: Recipe['split']['groupBy']): string {
  if (region.group) return `sheet:${region.group}`;
  if (by === 'manifest') return `manifest:${region.manifestId}`;
  if (by === 'canvas') return `canvas:${region.canvasId}`;
  return `annotation:${region.annotationId}`;
}

function rightsAllowed(rights: string | undefined, allow: string[] | undefined): boolean {
  if (!allow) return true;
  if (!rights) return false;
  return allow.some((a) => rights === a || rights.startsWith(a));
}

/** Picks the painted image that covers most of a region. */
function imageFor(images: readonly PaintedImage[], bounds: Rect): PaintedImage | undefined {
  let best: PaintedImage | undefined;
  let bestArea = 0;
  for (const img of images) {
    const x0 = Math.max(bounds.x, img.target.x), y0 = Math.max(bounds.y, img.target.y);
    const x1 = Math.min(bounds.x + bounds.w, img.target.x + img.target.w), y1 = Math.min(bounds.y + bounds.h, img.target.y + img.target.h);
    const a = Math.max(0, x1 - x0) * Math.max(0, y1 - y0);
    if (a > bestArea) {
      best = img;
      bestArea = a;
    }
  }
  return best;
}

/**
 * Plans the whole dataset: regions from annotations, one crop per region, the
 * positive patches each crop yields (by mask coverage), and seeded negatives on
 * the same canvases. Pure: the same inputs give the same plan, in sorted order.
 */
export function planDataset(recipe: Recipe, sources: ResolvedSources): DatasetPlan {
  const canvases = new Map<string, CanvasContext & { entry: ManifestEntry }>();
  const rightsExcluded: DatasetPlan['rightsExcluded'] = [];
  for (const entry of sources.manifests) {
    for (const canvas of entry.manifest.canvases) {
      if (!canvases.has(canvas.id)) canvases.set(canvas.id, { manifest: entry.manifest, canvas, entry });
    }
  }
  const { regions, skipped: regionSkips, obstacles } = extractRegions(sources.annotations, canvases, labelIndex(recipe.labels));
  const skipped: PlanSkip[] = regionSkips.map((s) => ({ key: s.annotationId, reason: s.reason, detail: s.detail }));
  const s = recipe.patch;
  const crops = new Map<string, CropRequest>();
  const contexts = new Map<string, CropContext>();
  const patches: PatchPlan[] = [];
  const positivesPerCanvas = new Map<string, number>();
  const excludedManifests = new Set<string>();

  const prepare = (canvasId: string, bounds: Rect): Prepared => {
    const c = canvases.get(canvasId)!;
    const image = imageFor(c.canvas.images, bounds);
    if (!image) return { skip: 'not-painted', detail: 'no image is painted where the region lies' };
    const ref = image.services[0];
    const service = ref ? sources.services.get(ref.id) : undefined;
    if (!service) return { skip: 'no-image-service', detail: ref ? `the image service ${ref.id} could not be read` : 'the painted image has no IIIF image service' };
    const placement: Placement = { target: image.target, source: image.selectorRegion ?? { x: 0, y: 0, w: service.width, h: service.height }, imageWidth: service.width, imageHeight: service.height };
    const scale = resolveScale(recipe.scale, placement, { canvas: c.canvas.physical, image: service.physical, mmPerCanvasUnit: c.entry.mmPerCanvasUnit });
    if (!scale) return { skip: 'no-physical-scale', detail: 'no physical dimensions service and no mmPerCanvasUnit for this source' };
    const provenance = mergeProvenance(c.manifest.provenance, { rights: service.rights, provider: [], ...(service.attribution ? { requiredStatement: { label: 'Attribution', value: service.attribution } } : {}) });
    if (!rightsAllowed(provenance.rights, recipe.rights.allow)) {
      if (!excludedManifests.has(c.manifest.id)) {
        excludedManifests.add(c.manifest.id);
        rightsExcluded.push({ manifestId: c.manifest.id, rights: provenance.rights ?? '(none)' });
      }
      return { skip: 'rights-excluded', detail: `rights ${provenance.rights ?? '(none)'} are not in rights.allow` };
    }
    return {
      ctx: { manifestId: c.manifest.id, canvasId, service, scale, provenance, collections: c.entry.collections, ...(image.choice ? { choice: image.choice } : {}) },
      placement,
      image,
    };
  };

  const addCrop = (crop: CropRequest, ctx: CropContext) => {
    if (!crops.has(crop.key)) {
      crops.set(crop.key, crop);
      contexts.set(crop.key, ctx);
    }
  };

  for (const region of regions) {
    const prep = prepare(region.canvasId, region.bounds);
    if ('skip' in prep) {
      skipped.push({ key: region.key, reason: prep.skip, detail: prep.detail });
      continue;
    }
    const { ctx, placement } = prep;
    const px = ctx.scale.pixelsPerCanvasUnit;
    let crop: CropRequest;
    try {
      crop = planCrop({ service: ctx.service, placement, scale: px, canvasRect: region.bounds, format: recipe.request.format });
    } catch (err) {
      if (!(err instanceof PlanError)) throw err;
      skipped.push({ key: region.key, reason: 'unplannable', detail: err.message });
      continue;
    }
    const box = crop.outputBox;
    const origins = (start: number, len: number) => {
      const out: number[] = [];
      for (let u = Math.ceil(start / s.stride) * s.stride; u + s.size <= start + len; u += s.stride) out.push(u);
      return out;
    };
    const us = origins(box.x, box.w), vs = origins(box.y, box.h);
    if (us.length === 0 || vs.length === 0) {
      skipped.push({ key: region.key, reason: 'too-small-for-a-patch', detail: `the region is ${box.w}×${box.h} px at this scale, smaller than one ${s.size}-px patch on the grid` });
      continue;
    }
    const mask = rasterise([region.shape], { originX: box.x / px, originY: box.y / px, scaleX: px, scaleY: px, width: box.w, height: box.h });
    const cover = integralOf(mask);
    let kept = 0;
    for (const v of vs) {
      for (const u of us) {
        const inCrop = { x: u - box.x, y: v - box.y, w: s.size, h: s.size };
        const coverage = cover(inCrop);
        if (coverage < s.minCoverage) continue;
        const canvasRegion = { x: u / px, y: v / px, w: s.size / px, h: s.size / px };
        patches.push({
          id: stableId(['positive', region.key, px, u, v, s.size]),
          label: region.label,
          kind: 'positive',
          group: groupOf(region, recipe.split.groupBy),
          manifestId: region.manifestId,
          canvasId: region.canvasId,
          annotationId: region.annotationId,
          ...(region.annotator ? { annotator: region.annotator } : {}),
          rawLabel: region.rawLabel,
          regionKey: region.key,
          cropKey: crop.key,
          inCrop,
          canvasRegion: tidyRect(canvasRegion),
          imageRegion: tidyRect(canvasToImage(placement, canvasRegion)),
          coverage: Math.round(coverage * 1e4) / 1e4,
        });
        kept++;
      }
    }
    if (kept === 0) {
      skipped.push({ key: region.key, reason: 'no-patch-meets-coverage', detail: `no ${s.size}-px patch is at least ${s.minCoverage * 100}% inside the region` });
      continue;
    }
    addCrop(crop, ctx);
    positivesPerCanvas.set(region.canvasId, (positivesPerCanvas.get(region.canvasId) ?? 0) + kept);
  }

  const negatives = planNegatives(recipe, regions, positivesPerCanvas, canvases, obstacles, prepare, addCrop, patches);
  patches.sort((a, b) => byString(a.id, b.id));
  skipped.sort((a, b) => byString(a.key, b.key) || byString(a.reason, b.reason));
  return {
    crops: [...crops.values()].sort((a, b) => byString(a.key, b.key)),
    patches,
    contexts,
    regions,
    skipped,
    negatives,
    rightsExcluded: rightsExcluded.sort((a, b) => byString(a.manifestId, b.manifestId)),
  };
}

type Ready = { ctx: CropContext; placement: Placement; image: PaintedImage };
type Prepared = Ready | { skip: PlanSkipReason; detail: string };

interface Candidate {
  canvasId: string;
  u: number;
  v: number;
  rank: number;
}

function planNegatives(
  recipe: Recipe,
  regions: Region[],
  positivesPerCanvas: Map<string, number>,
  canvases: Map<string, CanvasContext & { entry: ManifestEntry }>,
  obstacles: Map<string, Rect[]>,
  prepare: (canvasId: string, bounds: Rect) => Prepared,
  addCrop: (crop: CropRequest, ctx: CropContext) => void,
  patches: PatchPlan[],
): DatasetPlan['negatives'] {
  const { ratio, margin, label } = recipe.negatives;
  const size = recipe.patch.size;
  const classes = Object.keys(recipe.labels).length;
  const positives = [...positivesPerCanvas.values()].reduce((a, b) => a + b, 0);
  const wanted = Math.round((ratio * positives) / classes);
  if (wanted === 0) return { wanted: 0, planned: 0, borrowedWithinGroup: 0, shortfall: 0 };

  const canvasIds = [...positivesPerCanvas.keys()].sort(byString);
  // Quotas proportional to positives per canvas, largest remainder, ties by canvas id.
  const exact = canvasIds.map((id) => (wanted * positivesPerCanvas.get(id)!) / positives);
  const quota = exact.map(Math.floor);
  let left = wanted - quota.reduce((a, b) => a + b, 0);
  const order = canvasIds.map((id, i) => ({ i, r: exact[i] - quota[i], id })).sort((a, b) => b.r - a.r || byString(a.id, b.id));
  for (const o of order) if (left-- > 0) quota[o.i]++;

  // Candidate positions per canvas: stride = size, inside the painted image, clear of every annotated area by the margin.
  // Candidates are computed per canvas when needed and not kept: memory stays flat in the number of canvases.
  const candidatesOf = (canvasId: string): { list: Candidate[]; prep: Ready | undefined } => {
    const c = canvases.get(canvasId)!;
    const whole = { x: 0, y: 0, w: c.canvas.width, h: c.canvas.height };
    const prep = prepare(canvasId, whole);
    if ('skip' in prep) return { list: [], prep: undefined };
    const px: number = prep.ctx.scale.pixelsPerCanvasUnit;
    const painted = innerOutputBox(prep.placement.target, px);
    const obs = obstacles.get(canvasId) ?? [];
    const list: Candidate[] = [];
    for (let v = Math.ceil(painted.y / size) * size; v + size <= painted.y + painted.h; v += size) {
      for (let u = Math.ceil(painted.x / size) * size; u + size <= painted.x + painted.w; u += size) {
        const grown = { x: (u - margin) / px, y: (v - margin) / px, w: (size + 2 * margin) / px, h: (size + 2 * margin) / px };
        if (obs.some((o) => intersects(grown, o) || (o.w === 0 && o.h === 0 && o.x >= grown.x && o.x <= grown.x + grown.w && o.y >= grown.y && o.y <= grown.y + grown.h))) continue;
        list.push({ canvasId, u, v, rank: seededUnit(recipe.seed, 'negative', canvasId, u, v) });
      }
    }
    list.sort((a, b) => a.rank - b.rank || a.v - b.v || a.u - b.u);
    return { list, prep };
  };
  const regionsByCanvas = new Map<string, Region[]>();
  for (const r of regions) {
    const list = regionsByCanvas.get(r.canvasId);
    if (list) list.push(r);
    else regionsByCanvas.set(r.canvasId, [r]);
  }

  const groupOfCanvas = (canvasId: string) => {
    const c = canvases.get(canvasId)!;
    return recipe.split.groupBy === 'manifest' ? `manifest:${c.manifest.id}` : `canvas:${canvasId}`;
  };
  const taken = new Map<string, number>();
  let borrowed = 0;
  let planned = 0;
  const take = (canvasId: string, n: number): number => {
    if (n <= 0) return 0;
    const entry = candidatesOf(canvasId);
    const start = taken.get(canvasId) ?? 0;
    const chosen = entry.list.slice(start, start + n);
    taken.set(canvasId, start + chosen.length);
    for (const cand of chosen) emit(cand, entry.prep!);
    return chosen.length;
  };
  const emit = (cand: Candidate, prep: Ready) => {
    const px: number = prep.ctx.scale.pixelsPerCanvasUnit;
    const canvasRegion = { x: cand.u / px, y: cand.v / px, w: size / px, h: size / px };
    const crop = planCrop({ service: prep.ctx.service, placement: prep.placement, scale: px, canvasRect: canvasRegion, format: recipe.request.format });
    addCrop(crop, prep.ctx);
    const c = canvases.get(cand.canvasId)!;
    let group = groupOfCanvas(cand.canvasId);
    let annotationId: string | undefined;
    if (recipe.split.groupBy === 'annotation') {
      // The nearest labelled region's annotation on this canvas (centre distance, ties by key).
      const cx = cand.u / px + size / px / 2, cy = cand.v / px + size / px / 2;
      let best: Region | undefined;
      let bestD = Infinity;
      for (const r of regionsByCanvas.get(cand.canvasId) ?? []) {
        const d = Math.hypot(r.bounds.x + r.bounds.w / 2 - cx, r.bounds.y + r.bounds.h / 2 - cy);
        if (d < bestD) {
          best = r;
          bestD = d;
        }
      }
      if (best) {
        group = groupOf(best, 'annotation');
        annotationId = best.annotationId;
      }
    }
    patches.push({
      id: stableId(['negative', cand.canvasId, px, cand.u, cand.v, size]),
      label,
      kind: 'negative',
      group,
      manifestId: c.manifest.id,
      canvasId: cand.canvasId,
      ...(annotationId ? { annotationId } : {}),
      cropKey: crop.key,
      inCrop: { x: cand.u - crop.outputBox.x, y: cand.v - crop.outputBox.y, w: size, h: size },
      canvasRegion: tidyRect(canvasRegion),
      imageRegion: tidyRect(canvasToImage(prep.placement, canvasRegion)),
      coverage: 0,
    });
    planned++;
  };

  const shortBy = new Map<string, number>();
  canvasIds.forEach((id, i) => {
    const got = take(id, quota[i]);
    if (got < quota[i]) shortBy.set(id, quota[i] - got);
  });
  // Borrow within the group: other canvases of the same group with spare candidates.
  for (const [id, missing] of [...shortBy.entries()].sort((a, b) => byString(a[0], b[0]))) {
    let need = missing;
    const g = groupOfCanvas(id);
    for (const other of canvasIds) {
      if (need === 0) break;
      if (other === id || groupOfCanvas(other) !== g) continue;
      const got = take(other, need);
      need -= got;
      borrowed += got;
    }
  }
  return { wanted, planned, borrowedWithinGroup: borrowed, shortfall: wanted - planned };
}
