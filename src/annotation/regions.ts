import { Rect, intersect, isEmpty } from '../geometry/rect.ts';
import { fragmentToRect } from '../geometry/media-fragment.ts';
import { Shape, shapeBounds } from '../geometry/shape.ts';
import type { Canvas, Manifest } from '../iiif/presentation.ts';
import { byString } from '../util/hash.ts';
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
  manifestId: string;
  canvasId: string;
  shape: Shape;
  /** Bounds clipped to the canvas. */
  bounds: Rect;
  /** An explicit group (sheet rows sharing a `group` value). */
  group?: string;
}

export type SkipReason = 'no-matching-label' | 'ambiguous-label' | 'unknown-canvas' | 'point-selector' | 'outside-canvas';

export interface SkippedRegion {
  annotationId: string;
  reason: SkipReason;
  detail: string;
}

export interface CanvasContext {
  manifest: Manifest;
  canvas: Canvas;
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
export function classify(labels: readonly string[], index: Map<string, string>): { label: string; raw: string } | { skip: 'no-matching-label' | 'ambiguous-label'; detail: string } {
  const hits = new Map<string, string>();
  for (const raw of labels) {
    const cls = index.get(normaliseLabel(raw));
    if (cls !== undefined && !hits.has(cls)) hits.set(cls, raw);
  }
  if (hits.size === 0) return { skip: 'no-matching-label', detail: labels.length ? `bodies ${JSON.stringify(labels)} match no class` : 'no body' };
  if (hits.size > 1) return { skip: 'ambiguous-label', detail: `bodies map to several classes: ${[...hits.keys()].sort(byString).join(', ')}` };
  const [[label, raw]] = [...hits.entries()];
  return { label, raw };
}

/**
 * Turns annotations into regions on known canvases. Every annotation either
 * yields regions or is recorded as skipped with a reason; none is dropped silently.
 * Output is sorted by region key, whatever the input order.
 */
export function extractRegions(
  annotations: readonly RegionAnnotation[],
  canvases: ReadonlyMap<string, CanvasContext>,
  index: Map<string, string>,
): { regions: Region[]; skipped: SkippedRegion[]; obstacles: Map<string, Rect[]> } {
  const regions: Region[] = [];
  const skipped: SkippedRegion[] = [];
  const obstacles = new Map<string, Rect[]>();
  for (const a of annotations) {
    // Every annotated area is an obstacle for negatives, whatever its label.
    for (const t of a.targets) {
      const ctx = canvases.get(t.canvasId);
      if (!ctx || t.selector.kind === 'whole') continue;
      const c = ctx.canvas;
      const r = t.selector.kind === 'point' ? { x: t.selector.x, y: t.selector.y, w: 0, h: 0 }
        : t.selector.kind === 'xywh' ? fragmentToRect(t.selector.fragment, c.width, c.height)
        : shapeBounds({ kind: 'polygon', rings: t.selector.rings });
      const list = obstacles.get(c.id) ?? [];
      list.push(r);
      obstacles.set(c.id, list);
    }
    const cls = classify(a.labels, index);
    if ('skip' in cls) {
      skipped.push({ annotationId: a.id, reason: cls.skip, detail: cls.detail });
      continue;
    }
    a.targets.forEach((t, i) => {
      const ctx = canvases.get(t.canvasId);
      if (!ctx) {
        skipped.push({ annotationId: a.id, reason: 'unknown-canvas', detail: `target ${t.canvasId} is on no canvas of the sources` });
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
