import type { Rect } from '../geometry/rect.ts';
import { intersects, tidyRect } from '../geometry/rect.ts';
import { integralOf, rasterise } from '../geometry/mask.ts';
import { Placement, canvasToImage } from '../geometry/placement.ts';
import type { ImageService } from '../iiif/image-service.ts';
import { mergeProvenance, PaintedImage, Provenance } from '../iiif/presentation.ts';
import { CanvasContext, CanvasLookup, canvasKey, extractRegions, labelIndex, Region, SkippedRegion } from '../annotation/regions.ts';
import type { BodyTag } from '../annotation/body-tags.ts';
import type { Recipe } from '../recipe/types.ts';
import type { ManifestEntry, ResolvedSources } from '../sources/resolve.ts';
import { byString, seededUnit, stableId } from '../util/hash.ts';
import type { CropRequest } from './crop-request.ts';
import { PlanError } from '../errors.ts';
import { planCrop } from './plan-crop.ts';
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
  tags?: BodyTag[];
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
  | 'rotated-image'
  | 'covered-by-another-image'
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

const VISIBILITY_SAMPLES = 32;

/**
 * Picks the painted image that is visible over most of a region. Images are
 * drawn in the order of the canvas's painting annotations, later ones over
 * earlier ones (Presentation 3.0 §3.4 `items`: "in order"; §5.6 painting), so the
 * image seen at a point is the last one whose target holds it. Visibility is
 * counted on a 32×32 grid of sample points over the region; ties go to the later image.
 */
export function visibleImageFor(images: readonly PaintedImage[], bounds: Rect): PaintedImage | undefined {
  if (images.length <= 1) return images.find((img) => intersects(img.target, bounds));
  const votes = new Map<PaintedImage, number>();
  for (let j = 0; j < VISIBILITY_SAMPLES; j++) {
    const y = bounds.y + ((j + 0.5) / VISIBILITY_SAMPLES) * bounds.h;
    for (let i = 0; i < VISIBILITY_SAMPLES; i++) {
      const x = bounds.x + ((i + 0.5) / VISIBILITY_SAMPLES) * bounds.w;
      let top: PaintedImage | undefined;
      for (const img of images) {
        const t = img.target;
        if (x >= t.x && x < t.x + t.w && y >= t.y && y < t.y + t.h && (!top || img.order > top.order)) top = img;
      }
      if (top) votes.set(top, (votes.get(top) ?? 0) + 1);
    }
  }
  let best: PaintedImage | undefined;
  for (const [img, n] of votes) if (!best || n > votes.get(best)! || (n === votes.get(best)! && img.order > best.order)) best = img;
  return best;
}

/** The targets of images painted over `image` (later in the order) that overlap it: where it is not visible. */
function occludersOf(images: readonly PaintedImage[], image: PaintedImage): Rect[] {
  return images.filter((o) => o.order > image.order && intersects(o.target, image.target)).map((o) => o.target);
}

const overlapsAny = (r: Rect, rects: readonly Rect[]) => rects.some((o) => intersects(r, o));

/**
 * Plans the whole dataset: regions from annotations, one crop per region, the
 * positive patches each crop yields (by mask coverage), and seeded negatives on
 * the same canvases. Pure: the same inputs give the same plan, in sorted order.
 */
export function planDataset(recipe: Recipe, sources: ResolvedSources): DatasetPlan {
  const rightsExcluded: DatasetPlan['rightsExcluded'] = [];
  const canvases = new CanvasLookup<CanvasContext & { entry: ManifestEntry }>(
    sources.manifests.flatMap((entry) => entry.manifest.canvases.map((canvas) => ({ manifest: entry.manifest, canvas, entry }))),
  );
  const { regions, skipped: regionSkips, obstacles } = extractRegions(sources.annotations, canvases, labelIndex(recipe.labels));
  const skipped: PlanSkip[] = regionSkips.map((s) => ({ key: s.annotationId, reason: s.reason, detail: s.detail }));
  const s = recipe.patch;
  const crops = new Map<string, CropRequest>();
  const contexts = new Map<string, CropContext>();
  const patches: PatchPlan[] = [];
  const positivesPerCanvas = new Map<string, number>();
  const excludedManifests = new Set<string>();

  const prepare = (key: string, bounds: Rect): Prepared => {
    const c = canvases.byCanvasKey(key)!;
    const canvasId = c.canvas.id;
    const image = visibleImageFor(c.canvas.images, bounds);
    if (!image) return { skip: 'not-painted', detail: 'no image is painted where the region lies' };
    if (image.rotation) {
      return { skip: 'rotated-image', detail: `the image is painted rotated by ${image.rotation.mirrored ? '!' : ''}${image.rotation.degrees}° (ImageApiSelector rotation); swatchbook does not cut rotated paintings, so the region is skipped rather than cut wrong` };
    }
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
      occluders: occludersOf(c.canvas.images, image),
    };
  };

  const addCrop = (crop: CropRequest, ctx: CropContext) => {
    if (!crops.has(crop.key)) {
      crops.set(crop.key, crop);
      contexts.set(crop.key, ctx);
    }
  };

  for (const region of regions) {
    const prep = prepare(canvasKey(region.manifestId, region.canvasId), region.bounds);
    if ('skip' in prep) {
      skipped.push({ key: region.key, reason: prep.skip, detail: prep.detail });
      continue;
    }
    const { ctx, placement } = prep;
    const px = ctx.scale.pixelsPerCanvasUnit;
    let crop: CropRequest;
    try {
      crop = planCrop({ service: ctx.service, placement, scale: px, canvasRect: region.bounds, format: recipe.request.format, quality: recipe.request.quality });
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
    let hidden = 0;
    for (const v of vs) {
      for (const u of us) {
        const inCrop = { x: u - box.x, y: v - box.y, w: s.size, h: s.size };
        const coverage = cover(inCrop);
        if (coverage < s.minCoverage) continue;
        const canvasRegion = { x: u / px, y: v / px, w: s.size / px, h: s.size / px };
        // A patch partly under a later-painted image would show pixels nobody sees on the canvas.
        if (overlapsAny(canvasRegion, prep.occluders)) {
          hidden++;
          continue;
        }
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
          tags: region.tags,
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
    if (kept === 0 && hidden > 0) {
      skipped.push({ key: region.key, reason: 'covered-by-another-image', detail: `every patch that meets the coverage lies partly under an image painted later on the canvas (${hidden} patch(es))` });
      continue;
    }
    if (kept === 0) {
      skipped.push({ key: region.key, reason: 'no-patch-meets-coverage', detail: `no ${s.size}-px patch is at least ${s.minCoverage * 100}% inside the region` });
      continue;
    }
    addCrop(crop, ctx);
    const ck = canvasKey(region.manifestId, region.canvasId);
    positivesPerCanvas.set(ck, (positivesPerCanvas.get(ck) ?? 0) + kept);
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

type Ready = { ctx: CropContext; placement: Placement; image: PaintedImage; occluders: Rect[] };
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
  canvases: CanvasLookup<CanvasContext & { entry: ManifestEntry }>,
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
    const c = canvases.byCanvasKey(canvasId)!;
    const whole = { x: 0, y: 0, w: c.canvas.width, h: c.canvas.height };
    const prep = prepare(canvasId, whole);
    if ('skip' in prep) return { list: [], prep: undefined };
    const px: number = prep.ctx.scale.pixelsPerCanvasUnit;
    const painted = innerOutputBox(prep.placement.target, px);
    // Labelled areas, and images painted over this one (their pixels are not this image's), are kept clear.
    const obs = [...(obstacles.get(canvasId) ?? []), ...prep.occluders];
    const list: Candidate[] = [];
    for (let v = Math.ceil(painted.y / size) * size; v + size <= painted.y + painted.h; v += size) {
      for (let u = Math.ceil(painted.x / size) * size; u + size <= painted.x + painted.w; u += size) {
        const grown = { x: (u - margin) / px, y: (v - margin) / px, w: (size + 2 * margin) / px, h: (size + 2 * margin) / px };
        if (obs.some((o) => intersects(grown, o) || (o.w === 0 && o.h === 0 && o.x >= grown.x && o.x <= grown.x + grown.w && o.y >= grown.y && o.y <= grown.y + grown.h))) continue;
        list.push({ canvasId, u, v, rank: seededUnit(recipe.seed, 'negative', canvases.isShared(c.canvas.id) ? canvasId : c.canvas.id, u, v) });
      }
    }
    list.sort((a, b) => a.rank - b.rank || a.v - b.v || a.u - b.u);
    return { list, prep };
  };
  const regionsByCanvas = new Map<string, Region[]>();
  for (const r of regions) {
    const k = canvasKey(r.manifestId, r.canvasId);
    const list = regionsByCanvas.get(k);
    if (list) list.push(r);
    else regionsByCanvas.set(k, [r]);
  }

  const groupOfCanvas = (key: string) => {
    const c = canvases.byCanvasKey(key)!;
    return recipe.split.groupBy === 'manifest' ? `manifest:${c.manifest.id}` : `canvas:${c.canvas.id}`;
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
    const crop = planCrop({ service: prep.ctx.service, placement: prep.placement, scale: px, canvasRect: canvasRegion, format: recipe.request.format, quality: recipe.request.quality });
    addCrop(crop, prep.ctx);
    const c = canvases.byCanvasKey(cand.canvasId)!;
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
      // Canvas ids alone are kept in the id so datasets stay stable; a canvas id shared by manifests adds the manifest.
      id: stableId(['negative', canvases.isShared(c.canvas.id) ? cand.canvasId : c.canvas.id, px, cand.u, cand.v, size]),
      label,
      kind: 'negative',
      group,
      manifestId: c.manifest.id,
      canvasId: c.canvas.id,
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
