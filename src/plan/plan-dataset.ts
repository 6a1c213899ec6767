import type { Rect } from '../geometry/rect.ts';
import { intersects, tidyRect } from '../geometry/rect.ts';
import { Placement, canvasToImage } from '../geometry/placement.ts';
import type { ImageService } from '../iiif/image-service.ts';
import { mergeProvenance, PaintedImage, Provenance } from '../iiif/presentation.ts';
import { CanvasContext, CanvasLookup, canvasKey, extractRegions, labelIndex, Region, RegionScope, SkippedRegion } from '../annotation/regions.ts';
import type { BodyTag } from '../annotation/body-tags.ts';
import type { Recipe } from '../recipe/types.ts';
import type { ManifestEntry, ResolvedSources } from '../sources/resolve.ts';
import { byString, stableId } from '../util/hash.ts';
import { positivePatches } from '../patch/positives.ts';
import { NegativeCanvas, NegativePick, NegativePlan, pickNegatives, planNegatives } from '../patch/negatives.ts';
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
  /** The canvas's place in its manifest (0-based), label and size in canvas units. */
  canvas: { index: number; label: string; width: number; height: number };
  /** Where the image is painted on the canvas, and which part of it. */
  placement: Placement;
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
  /** Where each crop comes from, by crop key (a plain object: the plan serialises as JSON). */
  contexts: Record<string, CropContext>;
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

/** Where planning puts what it plans, as it plans it (a crop once, with its context, the first time its key comes up). */
export interface PlanSink {
  crop(crop: CropRequest, ctx: CropContext): void;
  patch(patch: PatchPlan): void;
  region(region: Region): void;
  skip(skip: PlanSkip): void;
}

/** Canvases whose negatives the caller picks (with other manifests' canvases of their groups), and how to plan the picks. */
export interface DeferredNegatives {
  canvases: NegativeCanvas[];
  emit: (picks: readonly NegativePick[]) => void;
}

/** What planning counts besides the items it gives to its sink. */
export type PlanTotals = Pick<DatasetPlan, 'negatives' | 'rightsExcluded'>;

/**
 * What one planning call covers. By default: everything in its sources. The
 * streaming planner plans a manifest at a time, twice: positives first (their
 * counts per canvas set every canvas's share of the negatives), then negatives
 * from the shares it is given; it says which annotation targets and skips are
 * this manifest's, and which canvas ids other manifests share.
 */
export interface PlanScope extends RegionScope {
  /** Plan positives, and report regions and skips (default true). */
  positives?: boolean;
  /**
   * Negatives from this call's positives ('here', the default), from given counts and quotas, or none. With
   * `deferShared`, canvases whose id other manifests share are not picked here but returned as `deferred`.
   */
  negatives?: 'here' | 'none' | { positivesPerCanvas: ReadonlyMap<string, number>; quotas: ReadonlyMap<string, number>; deferShared?: boolean };
  sharedCanvasIds?: ReadonlySet<string>;
}

/**
 * Plans the whole dataset: regions from annotations, one crop per region, the
 * positive patches each crop yields (by mask coverage), and seeded negatives on
 * the same canvases. Pure: the same inputs give the same plan, in sorted order.
 */
export function planDataset(recipe: Recipe, sources: ResolvedSources): DatasetPlan {
  const collector = new PlanCollector();
  return collector.plan(planInto(recipe, sources, collector));
}

/**
 * A sink that keeps what planning gives it and sorts it into a DatasetPlan:
 * crops and contexts by key (the first context given for a key is kept), patches
 * by id, regions by key, skips by key and reason.
 */
export class PlanCollector implements PlanSink {
  private readonly crops = new Map<string, CropRequest>();
  private readonly contexts = new Map<string, CropContext>();
  private readonly patches: PatchPlan[] = [];
  private readonly regions: Region[] = [];
  private readonly skipped: PlanSkip[] = [];
  crop(crop: CropRequest, ctx: CropContext): void {
    if (this.crops.has(crop.key)) return;
    this.crops.set(crop.key, crop);
    this.contexts.set(crop.key, ctx);
  }
  patch(p: PatchPlan): void {
    this.patches.push(p);
  }
  region(r: Region): void {
    this.regions.push(r);
  }
  skip(x: PlanSkip): void {
    this.skipped.push(x);
  }
  plan(totals: PlanTotals): DatasetPlan {
    return {
      crops: [...this.crops.values()].sort((a, b) => byString(a.key, b.key)),
      patches: this.patches.sort((a, b) => byString(a.id, b.id)),
      contexts: Object.fromEntries([...this.contexts.entries()].sort((a, b) => byString(a[0], b[0]))),
      regions: this.regions.sort((a, b) => byString(a.key, b.key)),
      skipped: this.skipped.sort(bySkipOrder),
      negatives: totals.negatives,
      rightsExcluded: totals.rightsExcluded,
    };
  }
}

/** The order of a plan's skips: by key, then reason (a stable sort: ties keep the order they were planned in). */
export function bySkipOrder(a: PlanSkip, b: PlanSkip): number {
  return byString(a.key, b.key) || byString(a.reason, b.reason);
}

/**
 * Plans into a sink, in planning order (pure but for the sink): regions in key
 * order, skips and patches as they are found, each crop once. Nothing planned is
 * kept here but crop keys and counts per canvas, so a sink that writes items
 * away holds planning's memory to its sources.
 */
export function planInto(recipe: Recipe, sources: Pick<ResolvedSources, 'manifests' | 'annotations' | 'services'>, sink: PlanSink, scope: PlanScope = {}): PlanTotals & { positivesPerCanvas: Map<string, number>; deferred?: DeferredNegatives } {
  const rightsExcluded: DatasetPlan['rightsExcluded'] = [];
  const canvases = new CanvasLookup<CanvasContext & { entry: ManifestEntry; index: number }>(
    sources.manifests.flatMap((entry) => entry.manifest.canvases.map((canvas, index) => ({ manifest: entry.manifest, canvas, entry, index }))),
  );
  const planPositives = scope.positives ?? true;
  const { regions, skipped: regionSkips, obstacles } = extractRegions(sources.annotations, canvases, labelIndex(recipe.labels), scope);
  if (planPositives) {
    for (const r of regions) sink.region(r);
    for (const x of regionSkips) sink.skip({ key: x.annotationId, reason: x.reason, detail: x.detail });
  }
  const isShared = (canvasId: string) => canvases.isShared(canvasId) || !!scope.sharedCanvasIds?.has(canvasId);
  const s = recipe.patch;
  const cropKeys = new Set<string>();
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
      ctx: { manifestId: c.manifest.id, canvasId, canvas: { index: c.index, label: c.canvas.label, width: c.canvas.width, height: c.canvas.height }, placement, service, scale, provenance, collections: c.entry.collections, ...(image.choice ? { choice: image.choice } : {}) },
      placement,
      image,
      occluders: occludersOf(c.canvas.images, image),
    };
  };

  const addCrop = (crop: CropRequest, ctx: CropContext) => {
    if (!cropKeys.has(crop.key)) {
      cropKeys.add(crop.key);
      sink.crop(crop, ctx);
    }
  };

  for (const region of planPositives ? regions : []) {
    const prep = prepare(canvasKey(region.manifestId, region.canvasId), region.bounds);
    if ('skip' in prep) {
      sink.skip({ key: region.key, reason: prep.skip, detail: prep.detail });
      continue;
    }
    const { ctx, placement } = prep;
    const px = ctx.scale.pixelsPerCanvasUnit;
    let crop: CropRequest;
    try {
      crop = planCrop({ service: ctx.service, placement, scale: px, canvasRect: region.bounds, format: recipe.request.format, quality: recipe.request.quality });
    } catch (err) {
      if (!(err instanceof PlanError)) throw err;
      sink.skip({ key: region.key, reason: 'unplannable', detail: err.message });
      continue;
    }
    const { patches: found, fits, hidden } = positivePatches({ box: crop.outputBox, px, size: s.size, stride: s.stride, minCoverage: s.minCoverage, shape: region.shape, occluders: prep.occluders });
    if (!fits) {
      sink.skip({ key: region.key, reason: 'too-small-for-a-patch', detail: `the region is ${crop.outputBox.w}×${crop.outputBox.h} px at this scale, smaller than one ${s.size}-px patch on the grid` });
      continue;
    }
    for (const f of found) {
      sink.patch({
        id: stableId(['positive', region.key, px, f.u, f.v, s.size]),
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
        inCrop: f.inCrop,
        canvasRegion: tidyRect(f.canvasRegion),
        imageRegion: tidyRect(canvasToImage(placement, f.canvasRegion)),
        coverage: f.coverage,
      });
    }
    const kept = found.length;
    if (kept === 0 && hidden > 0) {
      sink.skip({ key: region.key, reason: 'covered-by-another-image', detail: `every patch that meets the coverage lies partly under an image painted later on the canvas (${hidden} patch(es))` });
      continue;
    }
    if (kept === 0) {
      sink.skip({ key: region.key, reason: 'no-patch-meets-coverage', detail: `no ${s.size}-px patch is at least ${s.minCoverage * 100}% inside the region` });
      continue;
    }
    addCrop(crop, ctx);
    const ck = canvasKey(region.manifestId, region.canvasId);
    positivesPerCanvas.set(ck, (positivesPerCanvas.get(ck) ?? 0) + kept);
  }

  const mode = scope.negatives ?? 'here';
  const { deferred, ...negatives } = mode === 'none'
    ? { wanted: 0, planned: 0, borrowedWithinGroup: 0, shortfall: 0, deferred: undefined }
    : addNegatives(recipe, regions, mode === 'here' ? { positivesPerCanvas } : mode, canvases, isShared, obstacles, prepare, addCrop, sink);
  return { negatives, rightsExcluded: rightsExcluded.sort((a, b) => byString(a.manifestId, b.manifestId)), positivesPerCanvas, ...(deferred ? { deferred } : {}) };
}

type Ready = { ctx: CropContext; placement: Placement; image: PaintedImage; occluders: Rect[] };
type Prepared = Ready | { skip: PlanSkipReason; detail: string };

/**
 * Turns the negative plan (pure sampling in src/patch/negatives.ts over plain
 * per-canvas facts) into crops and patch records.
 */
function addNegatives(
  recipe: Recipe,
  regions: readonly Region[],
  given: { positivesPerCanvas: ReadonlyMap<string, number>; quotas?: ReadonlyMap<string, number>; deferShared?: boolean },
  canvases: CanvasLookup<CanvasContext & { entry: ManifestEntry }>,
  isShared: (canvasId: string) => boolean,
  obstacles: ReadonlyMap<string, Rect[]>,
  prepare: (canvasKey: string, bounds: Rect) => Prepared,
  addCrop: (crop: CropRequest, ctx: CropContext) => void,
  sink: PlanSink,
): DatasetPlan['negatives'] & { deferred?: DeferredNegatives } {
  const size = recipe.patch.size;
  const groupOfCanvas = (key: string) => {
    const c = canvases.byCanvasKey(key)!;
    return recipe.split.groupBy === 'manifest' ? `manifest:${c.manifest.id}` : `canvas:${c.canvas.id}`;
  };
  const ready = new Map<string, Ready>();
  const facts: NegativeCanvas[] = [...given.positivesPerCanvas.entries()].map(([key, positives]) => {
    const c = canvases.byCanvasKey(key)!;
    const prep = prepare(key, { x: 0, y: 0, w: c.canvas.width, h: c.canvas.height });
    const rankKey = isShared(c.canvas.id) ? key : c.canvas.id;
    if ('skip' in prep) return { key, group: groupOfCanvas(key), positives, px: 1, obstacles: [], rankKey };
    ready.set(key, prep);
    const px = prep.ctx.scale.pixelsPerCanvasUnit;
    return { key, group: groupOfCanvas(key), positives, px, painted: innerOutputBox(prep.placement.target, px), obstacles: [...(obstacles.get(key) ?? []), ...prep.occluders], rankKey };
  });
  const spec = { seed: recipe.seed, ratio: recipe.negatives.ratio, margin: recipe.negatives.margin, size, classes: Object.keys(recipe.labels).length };
  // Quotas given (a manifest at a time): the wanted total and the shortfall are counted over all manifests by the caller.
  let plan: NegativePlan;
  // A canvas whose id another manifest shares is in one group with that manifest's canvas (groupBy canvas or
  // annotation): when planning a manifest at a time, its negatives are picked with the other's, by the caller.
  const deferred = given.quotas && given.deferShared && recipe.split.groupBy !== 'manifest' ? facts.filter((f) => isShared(canvases.byCanvasKey(f.key)!.canvas.id)) : [];
  if (given.quotas) {
    const { picks, borrowedWithinGroup } = pickNegatives(spec, deferred.length ? facts.filter((f) => !deferred.includes(f)) : facts, given.quotas);
    plan = { picks, wanted: 0, planned: picks.length, borrowedWithinGroup, shortfall: 0 };
  } else {
    plan = planNegatives(spec, facts);
  }
  const regionsByCanvas = new Map<string, Region[]>();
  for (const r of regions) {
    const k = canvasKey(r.manifestId, r.canvasId);
    const list = regionsByCanvas.get(k);
    if (list) list.push(r);
    else regionsByCanvas.set(k, [r]);
  }
  const emit = (pick: NegativePick) => {
    const prep = ready.get(pick.key)!;
    const px = prep.ctx.scale.pixelsPerCanvasUnit;
    const canvasRegion = { x: pick.u / px, y: pick.v / px, w: size / px, h: size / px };
    const crop = planCrop({ service: prep.ctx.service, placement: prep.placement, scale: px, canvasRect: canvasRegion, format: recipe.request.format, quality: recipe.request.quality });
    addCrop(crop, prep.ctx);
    const c = canvases.byCanvasKey(pick.key)!;
    let group = groupOfCanvas(pick.key);
    let annotationId: string | undefined;
    if (recipe.split.groupBy === 'annotation') {
      const best = nearestRegion(regionsByCanvas.get(pick.key) ?? [], canvasRegion);
      if (best) {
        group = groupOf(best, 'annotation');
        annotationId = best.annotationId;
      }
    }
    sink.patch({
      // Canvas ids alone are kept in the id so datasets stay stable; a canvas id shared by manifests adds the manifest.
      id: stableId(['negative', isShared(c.canvas.id) ? pick.key : c.canvas.id, px, pick.u, pick.v, size]),
      label: recipe.negatives.label,
      kind: 'negative',
      group,
      manifestId: c.manifest.id,
      canvasId: c.canvas.id,
      ...(annotationId ? { annotationId } : {}),
      cropKey: crop.key,
      inCrop: { x: pick.u - crop.outputBox.x, y: pick.v - crop.outputBox.y, w: size, h: size },
      canvasRegion: tidyRect(canvasRegion),
      imageRegion: tidyRect(canvasToImage(prep.placement, canvasRegion)),
      coverage: 0,
    });
  };
  for (const pick of plan.picks) emit(pick);
  const { picks: _picks, ...counts } = plan;
  return deferred.length ? { ...counts, deferred: { canvases: deferred, emit: (picks) => picks.forEach(emit) } } : counts;
}

/** The region whose centre is nearest the box's centre (ties: the first in input order). */
function nearestRegion(regions: readonly Region[], box: Rect): Region | undefined {
  const cx = box.x + box.w / 2, cy = box.y + box.h / 2;
  let best: Region | undefined;
  let bestD = Infinity;
  for (const r of regions) {
    const d = Math.hypot(r.bounds.x + r.bounds.w / 2 - cx, r.bounds.y + r.bounds.h / 2 - cy);
    if (d < bestD) {
      best = r;
      bestD = d;
    }
  }
  return best;
}
