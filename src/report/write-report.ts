import { mkdir, readFile, rename, rm, writeFile } from 'node:fs/promises';
import { basename, dirname, join, resolve } from 'node:path';
import sharp from 'sharp';
import { UsageError } from '../errors.ts';
import type { CanvasFacts } from '../dataset/canvas-facts.ts';
import { readIndexFile, IndexRecord } from '../dataset/records.ts';
import { stitchCrop } from '../cut/stitch.ts';
import { blit, decodeRgb, RgbImage, resizeRgb } from '../image/pixels.ts';
import { ContentCache } from '../net/cache.ts';
import { byString } from '../util/hash.ts';
import { renderReportHtml, ReportModel, TraceRow } from './html.ts';
import { occurrenceChart, sheetLayout } from './layout.ts';

/** Tiles per contact sheet cell, tile side (px) and columns. */
const SHEET_MAX = 40;
const SHEET_TILE = 48;
const SHEET_COLUMNS = 10;
/** Canvas maps drawn on the page; more are counted, not drawn. */
const MAPS_MAX = 400;
const SPLITS = ['train', 'val', 'test'];

/** Where the report goes for a dataset folder: beside it, never inside the hashed folder. */
export function defaultReportDir(dataset: string): string {
  return join(dirname(resolve(dataset)), `${basename(resolve(dataset))}-report`);
}

export interface ReportSummary {
  file: string;
  tiles: number;
  footprints: number;
  maps: number;
  thumbnails: number;
  images: number;
}

/**
 * Writes the visual report of a dataset folder into `outDir` (default
 * `<dataset>-report/`): `index.html` and `img/` (contact-sheet sprites, canvas
 * thumbnails, near-duplicate pairs). Thumbnails are read from the cache by the
 * hashes the dataset's lock names; one missing leaves its map without a picture.
 * The same dataset and cache give the same bytes. Written into a temporary
 * folder first and renamed into place.
 */
export async function writeReport(dataset: string, opts: { outDir?: string; cacheDir?: string } = {}): Promise<ReportSummary> {
  const outDir = opts.outDir ?? defaultReportDir(dataset);
  const missing = (name: string) => new UsageError(`${dataset} is not a swatchbook dataset with a report's inputs (${name} is missing; rebuild it with this version)`);
  const read = async (name: string) => {
    try {
      return await readFile(join(dataset, name), 'utf8');
    } catch {
      throw missing(name);
    }
  };
  const records = await readIndexFile(join(dataset, 'index.jsonl')).catch((err: NodeJS.ErrnoException) => {
    throw err.code === 'ENOENT' ? missing('index.jsonl') : err;
  });
  const card = JSON.parse(await read('card.json'));
  const canvases: CanvasFacts[] = JSON.parse(await read('canvases.json'));
  const lock = JSON.parse(await read('lock.json')) as { entries: Record<string, { sha256: string }> };
  const skipped = (await read('skipped.jsonl')).split('\n').filter(Boolean).map((l) => JSON.parse(l) as { key: string; reason: string; detail: string });
  const failures = (await read('failures.jsonl')).split('\n').filter(Boolean).map((l) => JSON.parse(l) as { key: string; reason: string; url?: string; pointer?: string; stage: string });
  let probeJson: { leakage?: { flagged: { test: string; train: string; distance: number; hamming: number; reason: string }[] }; retrieval?: { descriptor: string; direction: string; overall: { p1: number } }[]; baselines?: { random: { p1: number } } } | undefined;
  try {
    probeJson = JSON.parse(await readFile(join(`${resolve(dataset)}-probe`, 'probe.json'), 'utf8'));
  } catch {
    probeJson = undefined;
  }
  const seed: string = card.collection?.seed ?? 'swatchbook';
  const classes: string[] = card.composition?.classes ?? [...new Set(records.map((r) => r.label))].sort(byString);
  const byId = new Map(records.map((r) => [r.id, r]));

  const tmp = `${outDir}.partial`;
  await rm(tmp, { recursive: true, force: true });
  await mkdir(join(tmp, 'img'), { recursive: true });
  let images = 0;

  // Contact sheets: sprites composited from the patch files.
  const sheets: ReportModel['sheets'] = [];
  const shown = new Set<string>();
  for (const [ci, cls] of classes.entries()) for (const split of SPLITS) {
    const ids = records.filter((r) => r.label === cls && r.split === split).map((r) => r.id);
    const layout = sheetLayout(ids, seed, `${cls}/${split}`, SHEET_MAX, SHEET_TILE, SHEET_COLUMNS);
    const file = `img/sheet-${ci}-${split}.png`;
    if (layout.tiles.length) {
      const sprite: RgbImage = { width: layout.width, height: layout.height, data: Buffer.alloc(layout.width * layout.height * 3, 255) };
      for (const t of layout.tiles) {
        let img = await decodeRgb(await readFile(join(dataset, byId.get(t.id)!.file)));
        if (img.width !== layout.tile || img.height !== layout.tile) img = await resizeRgb(img, layout.tile, layout.tile);
        blit(sprite, img, t.x, t.y);
        shown.add(t.id);
      }
      await writeFile(join(tmp, file), await png(sprite));
      images++;
    }
    sheets.push({ cls, split, file, layout });
  }

  // Canvas maps: thumbnails stitched from cached pieces, outlines from canvases.json and the index.
  const cache = new ContentCache(opts.cacheDir ?? join(dirname(resolve(dataset)), '.swatchbook-cache'));
  const patchesOf = new Map<string, IndexRecord[]>();
  for (const r of records) {
    const k = `${r.manifest}\u001f${r.canvas}`;
    const list = patchesOf.get(k);
    if (list) list.push(r);
    else patchesOf.set(k, [r]);
  }
  const maps: ReportModel['maps'] = [];
  let thumbnails = 0;
  for (const [i, c] of canvases.slice(0, MAPS_MAX).entries()) {
    const t = c.thumbnail;
    const scale = t?.scale ?? 256 / Math.max(c.painted.w, c.painted.h);
    const box = t ? { x: t.crop.outputBox.x, y: t.crop.outputBox.y } : { x: Math.floor(c.painted.x * scale), y: Math.floor(c.painted.y * scale) };
    const width = t ? t.width : Math.max(1, Math.round(c.painted.w * scale));
    const height = t ? t.height : Math.max(1, Math.round(c.painted.h * scale));
    let file: string | null = null;
    if (t) {
      const bodies = new Map<string, Buffer>();
      for (const p of t.crop.stitch.pieces) for (const u of [p.url, p.fallbackUrl]) {
        const sha = u ? lock.entries[u]?.sha256 : undefined;
        const body = sha ? await cache.getBody(sha) : undefined;
        if (body && !bodies.has(p.url)) bodies.set(p.url, body);
      }
      try {
        const { image } = await stitchCrop(t.crop, (u) => bodies.get(u));
        file = `img/canvas-${i}.jpg`;
        await writeFile(join(tmp, file), await sharp(image.data, { raw: { width: image.width, height: image.height, channels: 3 } }).jpeg({ quality: 82, mozjpeg: false }).toBuffer());
        thumbnails++;
        images++;
      } catch {
        file = null;
      }
    }
    const on = patchesOf.get(`${c.manifest}\u001f${c.canvas}`) ?? [];
    maps.push({
      key: String(i), manifest: c.manifest, canvas: c.canvas, label: c.label, index: c.index, file, width, height, scale, box,
      regions: c.regions,
      footprints: on.map((r) => ({ id: r.id, label: r.label, kind: r.kind, rect: r.canvasRegion })),
    });
  }

  // Where each class occurs, per manifest.
  const labelOf = new Map(canvases.map((c) => [`${c.manifest}\u001f${c.canvas}`, { index: c.index, label: c.label }]));
  // One pass over the records: counts per manifest, class and canvas.
  const countsBy = new Map<string, Map<string, { label: string; canvasIndex: number; canvasLabel: string; count: number }>>();
  for (const r of records) {
    const c = labelOf.get(`${r.manifest}\u001f${r.canvas}`) ?? { index: 0, label: r.canvas };
    const counts = countsBy.get(r.manifest) ?? new Map();
    countsBy.set(r.manifest, counts);
    const k = `${r.label}\u001f${c.index}`;
    const e = counts.get(k) ?? { label: r.label, canvasIndex: c.index, canvasLabel: c.label, count: 0 };
    e.count++;
    counts.set(k, e);
  }
  const occurrence: ReportModel['occurrence'] = [...countsBy.keys()].sort(byString).map((manifest) => ({ manifest, chart: occurrenceChart([...countsBy.get(manifest)!.values()], classes) }));

  // Balance.
  const perClassSplit: Record<string, Record<string, number>> = {};
  for (const c of classes) perClassSplit[c] = Object.fromEntries(SPLITS.map((s) => [s, records.filter((r) => r.label === c && r.split === s).length]));
  const f = card.composition?.targetFractions ?? { train: 0.8, val: 0.1, test: 0.1 };
  const countBy = (key: (r: IndexRecord) => string) => {
    const m = new Map<string, Record<string, number>>();
    for (const r of records) {
      const k = key(r);
      const e = m.get(k) ?? Object.fromEntries(SPLITS.map((s) => [s, 0]));
      e[r.split] = (e[r.split] ?? 0) + 1;
      m.set(k, e);
    }
    return [...m.entries()].sort((a, b) => byString(a[0], b[0])).map(([label, v]) => ({ label, values: SPLITS.map((s) => ({ key: s, value: v[s] ?? 0 })) }));
  };
  const bars: ReportModel['bars'] = [
    { title: 'Share of each class\'s patches per split (dashed lines: the target cuts)', rows: classes.map((c) => ({ label: c, values: SPLITS.map((s) => ({ key: s, value: perClassSplit[c]![s]! })) })), normalise: true, marks: [f.train, f.train + f.val] },
    { title: 'Patches per source manifest, by split', rows: countBy((r) => r.manifest) },
    { title: 'Patches per rights statement, by split', rows: countBy((r) => r.rights ?? '(none stated)') },
    { title: 'Patches per annotator, by split', rows: countBy((r) => r.annotator ?? '(not stated)') },
  ];

  // Near-duplicate pairs side by side.
  const examples: { a: string; b: string; distance: number; groups: [string, string] }[] = card.composition?.nearDuplicates?.examples ?? [];
  const duplicates: ReportModel['duplicates'] = [];
  for (const [i, d] of examples.entries()) {
    const a = byId.get(d.a), b = byId.get(d.b);
    if (!a || !b) continue;
    const ia = await fit(await decodeRgb(await readFile(join(dataset, a.file))), SHEET_TILE);
    const ib = await fit(await decodeRgb(await readFile(join(dataset, b.file))), SHEET_TILE);
    const pair: RgbImage = { width: SHEET_TILE * 2 + 4, height: SHEET_TILE, data: Buffer.alloc((SHEET_TILE * 2 + 4) * SHEET_TILE * 3, 255) };
    blit(pair, ia, 0, 0);
    blit(pair, ib, SHEET_TILE + 4, 0);
    const file = `img/pair-${i}.png`;
    await writeFile(join(tmp, file), await png(pair));
    images++;
    duplicates.push({ ...d, file, width: pair.width, height: pair.height });
  }

  // Skips and failures grouped by reason.
  const problems: ReportModel['problems'] = [];
  for (const reason of [...new Set(skipped.map((s) => s.reason))].sort(byString)) {
    problems.push({ kind: 'skipped', reason, rows: skipped.filter((s) => s.reason === reason).map((s) => ({ key: s.key, detail: s.detail })) });
  }
  const failureReason = (x: { stage: string; reason: string }) => `${x.stage}: ${x.reason.replace(/\d+/g, 'N').slice(0, 80)}`;
  for (const reason of [...new Set(failures.map(failureReason))].sort(byString)) {
    problems.push({ kind: 'failure', reason, rows: failures.filter((x) => failureReason(x) === reason).map((x) => ({ key: x.key, ...(x.url ? { url: x.url } : {}), ...(x.pointer !== undefined ? { pointer: x.pointer } : {}), detail: x.reason })) });
  }

  const all = probeJson?.retrieval?.find((r) => r.descriptor === 'all' && r.direction === 'test→train');
  const model: ReportModel = {
    name: card.name ?? basename(dataset),
    generatedBy: `${card.collection?.tool?.name ?? 'swatchbook'} ${card.collection?.tool?.version ?? ''}`.trim(),
    classes,
    splits: SPLITS,
    targets: f,
    counts: { patches: records.length, perClassSplit },
    sheets,
    traces: [...shown].sort(byString).map((id) => traceRow(byId.get(id)!, labelOf)),
    maps,
    mapsOmitted: Math.max(0, canvases.length - MAPS_MAX),
    occurrence,
    bars,
    duplicates,
    duplicatesTotal: card.composition?.nearDuplicates?.pairs ?? duplicates.length,
    mergedGroups: card.composition?.nearDuplicates?.mergedGroups ?? 0,
    problems,
    probe: probeJson ? { separable: !!all && all.overall.p1 > (probeJson.baselines?.random.p1 ?? 0), p1: all?.overall.p1 ?? null, random: probeJson.baselines?.random.p1 ?? 0, flagged: probeJson.leakage?.flagged ?? [] } : null,
  };
  await writeFile(join(tmp, 'index.html'), renderReportHtml(model));
  await rm(outDir, { recursive: true, force: true });
  await rename(tmp, outDir);
  return { file: join(outDir, 'index.html'), tiles: shown.size, footprints: maps.reduce((a, m) => a + m.footprints.length, 0), maps: maps.length, thumbnails, images };
}

function traceRow(r: IndexRecord, labelOf: Map<string, { index: number; label: string }>): TraceRow {
  return {
    id: r.id, split: r.split, label: r.label, kind: r.kind, canvas: r.canvas,
    canvasLabel: labelOf.get(`${r.manifest}\u001f${r.canvas}`)?.label ?? '',
    annotation: r.annotation, requests: r.requests, rights: r.rights,
    requiredStatement: r.requiredStatement ? `${r.requiredStatement.label}: ${r.requiredStatement.value}` : null,
  };
}

async function fit(img: RgbImage, side: number): Promise<RgbImage> {
  return img.width === side && img.height === side ? img : resizeRgb(img, side, side);
}

function png(img: RgbImage): Promise<Buffer> {
  return sharp(img.data, { raw: { width: img.width, height: img.height, channels: 3 } }).png({ compressionLevel: 9, adaptiveFiltering: false, palette: false }).toBuffer();
}
