/**
 * The report's geometry, pure: which patches a contact sheet shows and where,
 * how canvas units map onto a thumbnail, where the occurrence marks and the
 * bars go. Every number here is tested exactly; the writer only draws them.
 */
import type { Rect } from '../geometry/rect.ts';
import { byString, seededUnit } from '../util/hash.ts';

/** Colours safe for the common colour-vision deficiencies (Okabe and Ito, "Color Universal Design", 2008), black last. */
export const PALETTE = ['#E69F00', '#56B4E9', '#009E73', '#F0E442', '#0072B2', '#D55E00', '#CC79A7', '#000000'] as const;
/** Outline dash patterns paired with the colours, so no class is told apart by colour alone. */
export const DASHES = ['', '6 3', '2 2', '8 2 2 2', '1 3', '4 4', '10 3', '3 1'] as const;

export function classStyle(classes: readonly string[], label: string): { colour: string; dash: string; index: number } {
  const index = [...classes].sort(byString).indexOf(label);
  const i = index < 0 ? 0 : index;
  return { colour: PALETTE[i % PALETTE.length]!, dash: DASHES[i % DASHES.length]!, index: i };
}

export interface SheetTile {
  id: string;
  /** Top-left corner in the sprite, pixels. */
  x: number;
  y: number;
}

export interface SheetLayout {
  tiles: SheetTile[];
  width: number;
  height: number;
  tile: number;
  columns: number;
  /** Patches in the cell before sampling. */
  of: number;
}

/**
 * A contact sheet for one class × split cell: up to `max` patches chosen by
 * seeded hash (stable when patches are added: a chosen patch stays chosen
 * unless a new one hashes lower), shown in id order, `columns` to a row with
 * `gap` pixels between tiles.
 */
export function sheetLayout(ids: readonly string[], seed: string, cell: string, max: number, tile: number, columns: number, gap = 2): SheetLayout {
  const chosen = [...ids]
    .map((id) => ({ id, u: seededUnit(seed, 'report-sheet', cell, id) }))
    .sort((a, b) => a.u - b.u || byString(a.id, b.id))
    .slice(0, max)
    .map((x) => x.id)
    .sort(byString);
  const cols = Math.max(1, Math.min(columns, chosen.length));
  const rows = Math.ceil(chosen.length / cols);
  return {
    tiles: chosen.map((id, i) => ({ id, x: (i % cols) * (tile + gap), y: Math.floor(i / cols) * (tile + gap) })),
    width: chosen.length ? cols * (tile + gap) - gap : 0,
    height: rows ? rows * (tile + gap) - gap : 0,
    tile,
    columns: cols,
    of: ids.length,
  };
}

/**
 * Canvas units → thumbnail pixels. The thumbnail is the output box of a crop on the
 * canvas-anchored grid at `scale` pixels per canvas unit, so a canvas point (x, y)
 * lands at (x·scale − box.x, y·scale − box.y).
 */
export function canvasToThumbnail(scale: number, box: Pick<Rect, 'x' | 'y'>) {
  const point = (x: number, y: number): [number, number] => [round2(x * scale - box.x), round2(y * scale - box.y)];
  const rect = (r: Rect): Rect => {
    const [x, y] = point(r.x, r.y);
    return { x, y, w: round2(r.w * scale), h: round2(r.h * scale) };
  };
  return { point, rect };
}

export interface OccurrenceMark {
  label: string;
  canvasIndex: number;
  canvasLabel: string;
  count: number;
  cx: number;
  cy: number;
  r: number;
}

export interface OccurrenceChart {
  width: number;
  height: number;
  rows: { label: string; y: number }[];
  marks: OccurrenceMark[];
  /** Canvas indices at the ends of the axis (0-based positions in the manifest). */
  first: number;
  last: number;
}

/**
 * One manifest's occurrence chart: canvases along x by their place in the
 * manifest, one row per class, a circle whose area grows with the patch count
 * (radius ∝ √count, the largest count at `maxR`).
 */
export function occurrenceChart(
  counts: readonly { label: string; canvasIndex: number; canvasLabel: string; count: number }[],
  classes: readonly string[],
  geometry = { left: 110, right: 20, top: 14, rowHeight: 26, width: 720, maxR: 11 },
): OccurrenceChart {
  const g = geometry;
  const rows = [...classes].sort(byString).map((label, i) => ({ label, y: g.top + i * g.rowHeight + g.rowHeight / 2 }));
  const indices = counts.map((c) => c.canvasIndex);
  const first = indices.length ? Math.min(...indices) : 0;
  const last = indices.length ? Math.max(...indices) : 0;
  const span = Math.max(1, last - first);
  const max = Math.max(1, ...counts.map((c) => c.count));
  const rowOf = new Map(rows.map((r) => [r.label, r.y]));
  const marks = counts
    .filter((c) => c.count > 0 && rowOf.has(c.label))
    .map((c) => ({
      ...c,
      cx: round2(g.left + (last === first ? (g.width - g.left - g.right) / 2 : ((c.canvasIndex - first) / span) * (g.width - g.left - g.right))),
      cy: rowOf.get(c.label)!,
      r: round2(Math.max(1.5, g.maxR * Math.sqrt(c.count / max))),
    }))
    .sort((a, b) => byString(a.label, b.label) || a.canvasIndex - b.canvasIndex);
  return { width: g.width, height: g.top * 2 + rows.length * g.rowHeight + 14, rows, marks, first, last };
}

export interface Bar {
  label: string;
  y: number;
  segments: { key: string; x: number; w: number; value: number }[];
}

/**
 * Horizontal bars, one per row: each row's values laid end to end from x = left,
 * scaled so the largest row total spans `width − left − right` (or, with
 * `normalise`, every row spans it: shares).
 */
export function barRows(
  rows: readonly { label: string; values: readonly { key: string; value: number }[] }[],
  opts: { left: number; right: number; width: number; top: number; rowHeight: number; normalise?: boolean },
): { bars: Bar[]; height: number; span: number } {
  const span = opts.width - opts.left - opts.right;
  const max = Math.max(1, ...rows.map((r) => r.values.reduce((a, v) => a + v.value, 0)));
  const bars = rows.map((r, i) => {
    const total = r.values.reduce((a, v) => a + v.value, 0);
    const k = opts.normalise ? (total > 0 ? span / total : 0) : span / max;
    let x = opts.left;
    const segments = r.values.map((v) => {
      const seg = { key: v.key, x: round2(x), w: round2(v.value * k), value: v.value };
      x += v.value * k;
      return seg;
    });
    return { label: r.label, y: opts.top + i * opts.rowHeight, segments };
  });
  return { bars, height: opts.top * 2 + rows.length * opts.rowHeight, span };
}

function round2(v: number): number {
  return Math.round(v * 100) / 100;
}
