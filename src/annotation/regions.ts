import { Rect, intersect, isEmpty } from '../geometry/rect.ts';
import { fragmentToRect } from '../geometry/media-fragment.ts';
import { Shape, shapeBounds } from '../geometry/shape.ts';
import type { Canvas, Manifest } from '../iiif/presentation.ts';
import { byString } from '../util/hash.ts';
import type { BodyTag } from './body-tags.ts';
import type { RegionAnnotation } from './web-annotation.ts';

/** A labelled area of one canvas, in canvas units: what the dataset is cut from. */
export interface Region {
  /** Stable key: annotation id and target index. */
  key: string;
  annotationId: string;
  annotator?: string;
  /** The body value that matched, and the class it maps to. */
  rawLabel: string;
  label: string;
  /** Every body value of the annotation (attributes beside the label). */
  tags: BodyTag[];
  manifestId: string;
  canvasId: string;
  shape: Shape;
  /** Bounds clipped to the canvas. */
  bounds: Rect;
  /** An explicit group (sheet rows sharing a `group` value). */
  group?: string;
}

export type SkipReason = 'no-matching-label' | 'ambiguous-label' | 'unreadable-body' | 'unknown-canvas' | 'point-selector' | 'outside-canvas';

export interface SkippedRegion {
  annotationId: string;
  reason: SkipReason;
  detail: string;
}

export interface CanvasContext {
  manifest: Manifest;
  canvas: Canvas;
}

/** The key of a canvas within its manifest: canvas ids are not unique across manifests in published data. */
export function canvasKey(manifestId: string, canvasId: string): string {
  return `${manifestId}\n${canvasId}`;
}

/**
 * Finds canvases by id. An annotation bound to a manifest (reached through it, or
 * naming it with `within`) is looked up in that manifest only; an unbound one
 * takes the first manifest, by id, that has the canvas.
 */
export class CanvasLookup<C extends CanvasContext = CanvasContext> {
  private readonly byKey = new Map<string, C>();
  private readonly firstById = new Map<string, C>();
  private readonly counts = new Map<string, number>();
  constructor(contexts: Iterable<C>) {
    const all = [...contexts].sort((a, b) => byString(a.manifest.id, b.manifest.id));
    for (const c of all) {
      const key = canvasKey(c.manifest.id, c.canvas.id);
      if (!this.byKey.has(key)) {
        this.byKey.set(key, c);
        this.counts.set(c.canvas.id, (this.counts.get(c.canvas.id) ?? 0) + 1);
      }
      if (!this.firstById.has(c.canvas.id)) this.firstById.set(c.canvas.id, c);
    }
  }
  get(canvasId: string, manifestId?: string): C | undefined {
    if (manifestId !== undefined) {
      const scoped = this.byKey.get(canvasKey(manifestId, canvasId));
      if (scoped) return scoped;
    }
    return this.firstById.get(canvasId);
  }
  /** Does more than one manifest have a canvas with this id? */
  isShared(canvasId: string): boolean {
    return (this.counts.get(canvasId) ?? 0) > 1;
  }
  byCanvasKey(key: string): C | undefined {
    return this.byKey.get(key);
  }
  /** Bound annotations look in their manifest only; `within` on a target binds it when the manifest is known. */
  find(canvasId: string, boundTo: string | undefined, within: string | undefined): C | undefined {
    if (boundTo !== undefined) return this.byKey.get(canvasKey(boundTo, canvasId));
    if (within !== undefined && this.byKey.has(canvasKey(within, canvasId))) return this.byKey.get(canvasKey(within, canvasId));
    return this.firstById.get(canvasId);
  }
}

/** Normalises a label for matching: trimmed, lower case, inner white space collapsed. */
export function normaliseLabel(value: string): string {
  return value.trim().toLowerCase().replace(/\s+/g, ' ');
}

/**
 * Builds the lookup from accepted body values (and IRIs) to class names. A value
 * listed under two classes is refused: the mapping must be a function.
 */
export function labelIndex(labels: Record<string, readonly string[]>): Map<string, string> {
  const index = new Map<string, string>();
  for (const cls of Object.keys(labels).sort(byString)) {
    for (const value of [cls, ...labels[cls]]) {
      const key = normaliseLabel(value);
      const prev = index.get(key);
      if (prev !== undefined && prev !== cls) throw new RangeError(`label value ${JSON.stringify(value)} is listed under both ${prev} and ${cls}`);
      index.set(key, cls);
    }
  }
  return index;
}

/** Which class an annotation's labels map to, or why none. */
export function classify(labels: readonly string[], index: Map<string, string>, unreadable: readonly string[] = []): { label: string; raw: string } | { skip: 'no-matching-label' | 'ambiguous-label' | 'unreadable-body'; detail: string } {
  const hits = new Map<string, string>();
  for (const raw of labels) {
    const cls = index.get(normaliseLabel(raw));
    if (cls !== undefined && !hits.has(cls)) hits.set(cls, raw);
  }
  if (hits.size === 0 && unreadable.length > 0) return { skip: 'unreadable-body', detail: `no class among the readable bodies, and ${unreadable.length} body(ies) could not be read: ${unreadable.join('; ')}` };
  if (hits.size === 0) return { skip: 'no-matching-label', detail: labels.length ? `bodies ${JSON.stringify(labels)} match no class` : 'no body' };
  if (hits.size > 1) return { skip: 'ambiguous-label', detail: `bodies map to several classes: ${[...hits.keys()].sort(byString).join(', ')}` };
  const [[label, raw]] = [...hits.entries()];
  return { label, raw };
}

/**
 * Which part of the annotations one call handles, when the canvases are planned
 * a manifest at a time: the targets on the manifest's canvases (`ownsTarget`),
 * and whether an annotation's own skip (a label that matches no class) is
 * reported here (it is reported once, where the annotation is handled whole).
 */
export interface RegionScope {
  ownsTarget?: (a: RegionAnnotation, targetIndex: number) => boolean;
  reportsAnnotation?: (a: RegionAnnotation) => boolean;
}

/**
 * Turns annotations into regions on known canvases. Every annotation either
 * yields regions or is recorded as skipped with a reason; none is dropped silently.
 * Output is sorted by region key, whatever the input order.
 */
export function extractRegions(
  annotations: readonly RegionAnnotation[],
  canvases: CanvasLookup,
  index: Map<string, string>,
  scope: RegionScope = {},
): { regions: Region[]; skipped: SkippedRegion[]; obstacles: Map<string, Rect[]> } {
  const owns = scope.ownsTarget ?? (() => true);
  const regions: Region[] = [];
  const skipped: SkippedRegion[] = [];
  /** Areas negatives must keep clear of, by canvas key. */
  const obstacles = new Map<string, Rect[]>();
  for (const a of annotations) {
    const cls = classify(a.labels, index, a.unreadableBodies);
    // Every annotated area is an obstacle for negatives, whatever its label; a whole-canvas target only
    // when it names a class (a comment on the whole board says nothing about where the material is).
    for (let i = 0; i < a.targets.length; i++) {
      const t = a.targets[i]!;
      if (!owns(a, i)) continue;
      const ctx = canvases.find(t.canvasId, a.manifestId, t.within);
      if (!ctx || (t.selector.kind === 'whole' && 'skip' in cls)) continue;
      const c = ctx.canvas;
      const r = t.selector.kind === 'whole' ? { x: 0, y: 0, w: c.width, h: c.height }
        : t.selector.kind === 'point' ? { x: t.selector.x, y: t.selector.y, w: 0, h: 0 }
        : t.selector.kind === 'xywh' ? fragmentToRect(t.selector.fragment, c.width, c.height)
        : shapeBounds({ kind: 'polygon', rings: t.selector.rings });
      const key = canvasKey(ctx.manifest.id, c.id);
      const list = obstacles.get(key) ?? [];
      list.push(r);
      obstacles.set(key, list);
    }
    if ('skip' in cls) {
      if (scope.reportsAnnotation?.(a) ?? true) skipped.push({ annotationId: a.id, reason: cls.skip, detail: cls.detail });
      continue;
    }
    a.targets.forEach((t, i) => {
      if (!owns(a, i)) return;
      const ctx = canvases.find(t.canvasId, a.manifestId, t.within);
      if (!ctx) {
        skipped.push({ annotationId: a.id, reason: 'unknown-canvas', detail: a.manifestId ? `target ${t.canvasId} is on no canvas of ${a.manifestId}, the manifest it was reached through` : `target ${t.canvasId} is on no canvas of the sources` });
        return;
      }
      const { canvas } = ctx;
      let shape: Shape;
      switch (t.selector.kind) {
        case 'point':
          skipped.push({ annotationId: a.id, reason: 'point-selector', detail: 'a PointSelector marks a point, not an area' });
          return;
        case 'whole':
          shape = { kind: 'rect', rect: { x: 0, y: 0, w: canvas.width, h: canvas.height } };
          break;
        case 'xywh':
          shape = { kind: 'rect', rect: fragmentToRect(t.selector.fragment, canvas.width, canvas.height) };
          break;
        case 'svg':
          shape = { kind: 'polygon', rings: t.selector.rings };
          break;
      }
      const bounds = intersect(shapeBounds(shape), { x: 0, y: 0, w: canvas.width, h: canvas.height });
      if (isEmpty(bounds)) {
        skipped.push({ annotationId: a.id, reason: 'outside-canvas', detail: `the region lies outside the ${canvas.width}×${canvas.height} canvas` });
        return;
      }
      regions.push({
        key: a.targets.length > 1 ? `${a.id}#${i}` : a.id,
        annotationId: a.id,
        ...(a.annotator ? { annotator: a.annotator } : {}),
        rawLabel: cls.raw,
        label: cls.label,
        tags: a.tags,
        manifestId: ctx.manifest.id,
        canvasId: canvas.id,
        shape,
        bounds,
        ...(a.group ? { group: a.group } : {}),
      });
    });
  }
  regions.sort((x, y) => byString(x.key, y.key));
  skipped.sort((x, y) => byString(x.annotationId, y.annotationId) || byString(x.reason, y.reason));
  return { regions, skipped, obstacles };
}
