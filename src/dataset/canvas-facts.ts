import type { Rect } from '../geometry/rect.ts';
import type { Shape } from '../geometry/shape.ts';
import type { CropRequest } from '../plan/crop-request.ts';
import { planCrop } from '../plan/plan-crop.ts';
import type { DatasetPlan } from '../plan/plan-dataset.ts';
import { redactUrl } from '../errors.ts';
import { byString } from '../util/hash.ts';

/** Longest side of a canvas thumbnail, in pixels. */
export const THUMBNAIL_SIDE = 256;

/** What the report needs to know about one canvas that contributed patches (written as `canvases.json`). */
export interface CanvasFacts {
  manifest: string;
  canvas: string;
  index: number;
  label: string;
  width: number;
  height: number;
  /** Where the image is painted on the canvas (canvas units); the thumbnail shows this area. */
  painted: Rect;
  service: { id: string; version: number; level: number };
  /** The thumbnail request, planned like any crop (server limits, level-0 tiles), or null when none could be planned. */
  thumbnail: { scale: number; width: number; height: number; crop: CropRequest } | null;
  /** Every labelled region on the canvas, outline in canvas units. */
  regions: { annotation: string; label: string; shape: Shape }[];
}

/**
 * The facts of every canvas that has planned patches (pure): its place in its
 * manifest, the painted area, the annotated regions and a thumbnail request of
 * at most THUMBNAIL_SIDE pixels, planned by the crop planner so that it respects
 * the server's sizes, limits and tiles. Sorted by manifest, then canvas index.
 */
export function canvasFacts(plan: DatasetPlan, side = THUMBNAIL_SIDE): CanvasFacts[] {
  const byCanvas = new Map<string, string>(); // manifest + canvas → a crop key (the smallest)
  for (const p of plan.patches) {
    const k = `${p.manifestId}\u001f${p.canvasId}`;
    const prev = byCanvas.get(k);
    if (prev === undefined || byString(p.cropKey, prev) < 0) byCanvas.set(k, p.cropKey);
  }
  const out: CanvasFacts[] = [];
  for (const [k, cropKey] of byCanvas) {
    const ctx = plan.contexts[cropKey]!;
    const [manifestId, canvasId] = k.split('\u001f') as [string, string];
    const t = ctx.placement.target;
    const scale = side / Math.max(t.w, t.h);
    let thumbnail: CanvasFacts['thumbnail'] = null;
    try {
      const crop = planCrop({ service: ctx.service, placement: ctx.placement, scale, canvasRect: t, format: 'jpg' });
      thumbnail = { scale, width: crop.outputBox.w, height: crop.outputBox.h, crop };
    } catch {
      thumbnail = null;
    }
    out.push({
      manifest: redactUrl(manifestId),
      canvas: redactUrl(canvasId),
      index: ctx.canvas.index,
      label: ctx.canvas.label,
      width: ctx.canvas.width,
      height: ctx.canvas.height,
      painted: t,
      service: { id: redactUrl(ctx.service.id), version: ctx.service.version, level: ctx.service.level },
      thumbnail,
      regions: plan.regions
        .filter((r) => r.manifestId === manifestId && r.canvasId === canvasId)
        .map((r) => ({ annotation: r.annotationId, label: r.label, shape: r.shape }))
        .sort((a, b) => byString(a.annotation, b.annotation) || byString(a.label, b.label)),
    });
  }
  return out.sort((a, b) => byString(a.manifest, b.manifest) || a.index - b.index || byString(a.canvas, b.canvas));
}
