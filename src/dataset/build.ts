import { mkdir, rename, rm, writeFile } from 'node:fs/promises';
import { dirname, isAbsolute, join, relative } from 'node:path';
import sharp from 'sharp';
import pLimit from 'p-limit';
import { FetchError, redactUrl } from '../errors.ts';
import { FailureRecord, fetchPiece, harvestCrops, HarvestResult } from '../harvest/harvest.ts';
import { encodePng, extractRgb } from '../image/pixels.ts';
import { memoisedDecoder, stitchCrop } from '../cut/stitch.ts';
import type { Fetcher } from '../net/fetcher.ts';
import { lockFrom, serialiseLock } from '../net/lock.ts';
import type { DatasetPlan, PatchPlan } from '../plan/plan-dataset.ts';
import type { Recipe } from '../recipe/types.ts';
import type { ResolvedSources } from '../sources/resolve.ts';
import { dHash } from '../patch/dhash.ts';
import { assignSplits, SPLITS } from '../split/assign.ts';
import { mergeGroups, nearDuplicatePairs } from '../split/near-duplicates.ts';
import { byString, sha256Hex } from '../util/hash.ts';
import { VERSION } from '../version.ts';
import { attributionMarkdown } from './attribution.ts';
import { buildCard, renderCardMarkdown } from './card.ts';
import { provenanceDocument } from './provenance.ts';
import { IndexRecord, serialiseIndex } from './records.ts';
import { FolderTransaction } from './write-folder.ts';

export interface BuildSummary {
  patches: number;
  perSplit: Record<string, number>;
  crops: number;
  cropsFailed: number;
  failures: number;
  nearDuplicatePairs: number;
  harvest: HarvestResult['summary'];
  out: string;
}

export interface BuildOptions {
  /** Crops stitched at once (CPU work). */
  cpuConcurrency?: number;
  onProgress?: (stage: 'fetch' | 'cut', done: number, total: number) => void;
}

/** Bump when cutting, encoding or hashing changes, so cached cut results are not reused. */
const DERIVED_VERSION = 2;

interface Cut {
  sha256: string;
  phash: string;
  textured: boolean;
}

export function toolVersions() {
  return { name: 'swatchbook', version: VERSION, sharp: sharp.versions.sharp ?? 'unknown', libvips: sharp.versions.vips, node: process.versions.node.split('.')[0] };
}

/**
 * The recipe as written into the card: defaults filled, local paths relative to
 * the recipe's folder, and no output folder: the dataset's bytes must not depend
 * on where it is written.
 */
export function recipeForCard(recipe: Recipe): unknown {
  const base = dirname(recipe.file);
  const rel = (p: string) => (/^https?:\/\//i.test(p) ? redactUrl(p) : !isAbsolute(p) ? p : relative(base, p) || '.');
  const { file: _file, output: _output, ...rest } = recipe;
  return {
    ...rest,
    sources: recipe.sources.map((s) => ({ [s.kind]: rel(s.location), ...('mmPerCanvasUnit' in s && s.mmPerCanvasUnit !== undefined ? { mmPerCanvasUnit: s.mmPerCanvasUnit } : {}) })),
  };
}

/**
 * Harvests the plan's crops (from the cache where present), cuts the planned
 * patches, merges near-duplicate groups, assigns splits and writes the dataset
 * folder atomically. Output bytes depend only on the recipe and the source
 * bytes, never on concurrency or arrival order.
 */
export async function buildDataset(recipe: Recipe, sources: ResolvedSources, plan: DatasetPlan, fetcher: Fetcher, opts: BuildOptions = {}): Promise<BuildSummary> {
  const harvest = await harvestCrops(plan.crops, fetcher, { onProgress: (d, t) => opts.onProgress?.('fetch', d, t) });
  const failures: FailureRecord[] = [...sources.failures, ...harvest.failures];
  const tx = await FolderTransaction.begin(recipe.output);
  try {
    const staging = tx.path('.staging');
    await mkdir(staging, { recursive: true });
    const byCrop = new Map<string, PatchPlan[]>();
    for (const p of plan.patches) {
      const list = byCrop.get(p.cropKey);
      if (list) list.push(p);
      else byCrop.set(p.cropKey, [p]);
    }
    const cropByKey = new Map(plan.crops.map((c) => [c.key, c]));
    const cuts = new Map<string, Cut>();
    const cache = fetcher.options.cache;
    let done = 0;
    const served = [...harvest.served.keys()];
    const derivedKeyOf = (key: string) => {
      const crop = cropByKey.get(key)!;
      // Cut results are cached under the hash of everything they depend on, so a warm rebuild copies instead of re-encoding.
      return sha256Hex(JSON.stringify({ v: DERIVED_VERSION, tool: [sharp.versions.sharp, sharp.versions.vips], stitch: crop.stitch, pieces: harvest.served.get(key)!.map((o) => o.sha256), patches: (byCrop.get(key) ?? []).map((p) => [p.id, p.inCrop]) }));
    };
    // Pass 1 (I/O): crops whose cut results are cached and intact are copied.
    const ioLimit = pLimit(16);
    /** Pieces a server returned ±1 pixel off (within tolerance) and we resampled to the planned size, per crop. */
    const resampledByCrop = new Map<string, number>();
    const reused = new Set<string>();
    await Promise.all(
      served.map((key) =>
        ioLimit(async () => {
          const patches = byCrop.get(key) ?? [];
          const derived = await cache.getDerived<{ cuts: Record<string, Cut>; resampledPieces: number }>(derivedKeyOf(key));
          const known = derived?.cuts;
          if (!known || !patches.every((p) => known[p.id])) return;
          const bodies = await Promise.all(patches.map((p) => cache.getBody(known[p.id].sha256)));
          if (!bodies.every((b) => b !== undefined)) return;
          await Promise.all(patches.map((p, i) => writeFile(join(staging, `${p.id}.png`), bodies[i]!)));
          for (const p of patches) cuts.set(p.id, known[p.id]);
          resampledByCrop.set(key, derived!.resampledPieces);
          reused.add(key);
          opts.onProgress?.('cut', ++done, served.length);
        }),
      ),
    );
    // Pass 2 (CPU): stitch, cut, encode and hash the rest.
    const limit = pLimit(opts.cpuConcurrency ?? 2);
    const decode = memoisedDecoder();
    await Promise.all(
      served.filter((key) => !reused.has(key)).map((key) =>
        limit(async () => {
          const crop = cropByKey.get(key)!;
          const patches = byCrop.get(key) ?? [];
          try {
            const bodies = new Map<string, Buffer>();
            for (const piece of crop.stitch.pieces) bodies.set(piece.url, (await fetchPiece(fetcher, piece)).body);
            const { image, resampledPieces } = await stitchCrop(crop, (u) => bodies.get(u), decode);
            resampledByCrop.set(key, resampledPieces);
            const made: Record<string, Cut> = {};
            for (const p of patches) {
              const patch = extractRgb(image, p.inCrop.x, p.inCrop.y, p.inCrop.w, p.inCrop.h);
              const png = await encodePng(patch);
              const h = dHash(patch.data, patch.width, patch.height);
              await writeFile(join(staging, `${p.id}.png`), png);
              const cut = { sha256: await cache.putBody(png), phash: h.hash, textured: h.textured };
              cuts.set(p.id, cut);
              made[p.id] = cut;
            }
            await cache.putDerived(derivedKeyOf(key), { cuts: made, resampledPieces });
          } catch (err) {
            const reason = err instanceof FetchError ? err.reason : (err as Error).message;
            failures.push({ stage: 'crop', key, reason: `could not be stitched: ${reason}` });
          } finally {
            opts.onProgress?.('cut', ++done, served.length);
          }
        }),
      ),
    );

    const kept = plan.patches.filter((p) => cuts.has(p.id));
    const dropped = plan.patches.length - kept.length;
    // Near-duplicates across groups join their groups before splitting.
    const pairs = nearDuplicatePairs(kept.map((p) => ({ id: p.id, group: p.group, hash: cuts.get(p.id)!.phash, textured: cuts.get(p.id)!.textured })), recipe.dedupe.maxDistance);
    const merged = mergeGroups(kept.map((p) => p.group), pairs.map((x) => x.groups));
    const groupOf = (p: PatchPlan) => merged.get(p.group) ?? p.group;
    const mergedGroups = new Set([...merged.entries()].filter(([g, r]) => g !== r).map(([g]) => g)).size;
    const classesByGroup = new Map<string, Record<string, number>>();
    for (const p of kept) {
      const g = groupOf(p);
      const c = classesByGroup.get(g) ?? {};
      c[p.label] = (c[p.label] ?? 0) + 1;
      classesByGroup.set(g, c);
    }
    const assignment = assignSplits([...classesByGroup.entries()].map(([key, classes]) => ({ key, classes })), recipe.seed, recipe.split.fractions);

    const records: IndexRecord[] = [];
    for (const p of kept) {
      const crop = cropByKey.get(p.cropKey)!;
      const ctx = plan.contexts.get(p.cropKey)!;
      const cut = cuts.get(p.id)!;
      const split = assignment.byGroup.get(groupOf(p))!;
      const file = `patches/${split}/${p.label}/${p.id}.png`;
      const responses = (harvest.served.get(p.cropKey) ?? []).map((o) => ({ url: redactUrl(o.url), sha256: o.sha256 }));
      records.push({
        id: p.id,
        split,
        label: p.label,
        kind: p.kind,
        file,
        sha256: cut.sha256,
        phash: cut.phash,
        coverage: p.coverage,
        group: groupOf(p),
        manifest: redactUrl(p.manifestId),
        collections: ctx.collections.map(redactUrl),
        canvas: redactUrl(p.canvasId),
        annotation: p.annotationId ?? null,
        annotator: p.annotator ?? null,
        sourceLabel: p.rawLabel ?? null,
        tags: (p.tags ?? []).map((t) => ({ value: t.value, purpose: t.purpose ?? null, language: t.language ?? null, raw: t.raw ?? null })),
        bodyChoice: ctx.choice ?? null,
        service: { id: redactUrl(ctx.service.id), version: ctx.service.version, level: ctx.service.level },
        requests: crop.stitch.pieces.map((x) => redactUrl(x.url)),
        responses,
        canvasRegion: p.canvasRegion,
        imageRegion: p.imageRegion,
        scale: { pixelsPerCanvasUnit: ctx.scale.pixelsPerCanvasUnit, basis: ctx.scale.basis, mmPerCanvasUnit: ctx.scale.mmPerCanvasUnit ?? null },
        crop: p.cropKey,
        rights: ctx.provenance.rights ?? null,
        requiredStatement: ctx.provenance.requiredStatement ?? null,
        provider: ctx.provenance.provider,
        logos: (ctx.provenance.logos ?? []).map(redactUrl),
        partOf: (ctx.provenance.partOf ?? []).map(redactUrl),
      });
    }
    for (const dir of new Set(records.map((r) => dirname(tx.path(r.file))))) await mkdir(dir, { recursive: true });
    const moveLimit = pLimit(16);
    await Promise.all(records.map((r) => moveLimit(() => rename(join(staging, `${r.id}.png`), tx.path(r.file)))));
    records.sort((a, b) => byString(a.id, b.id));
    failures.sort((a, b) => byString(a.stage, b.stage) || byString(a.key, b.key) || byString(a.reason, b.reason));

    const tool = toolVersions();
    const card = buildCard({
      recipe,
      recipeShown: recipeForCard(recipe),
      records,
      plan,
      failures,
      pairs,
      mergedGroups,
      assignment,
      notes: sources.notes ?? [],
      sources: sources.documents.map((d) => ({ ...d, location: /^https?:/.test(d.location) ? redactUrl(d.location) : relative(dirname(recipe.file), d.location) })),
      tool,
      droppedPatches: dropped,
      resampledPieces: [...resampledByCrop.values()].reduce((a, b) => a + b, 0),
    });
    await writeFile(tx.path('index.jsonl'), serialiseIndex(records));
    await mkdir(tx.path('splits'), { recursive: true });
    for (const s of SPLITS) await writeFile(tx.path(`splits/${s}.txt`), records.filter((r) => r.split === s).map((r) => `${r.id}\n`).join(''));
    await writeFile(tx.path('card.json'), `${JSON.stringify(card, null, 2)}\n`);
    await writeFile(tx.path('card.md'), renderCardMarkdown(card));
    await writeFile(tx.path('lock.json'), serialiseLock(lockFrom(fetcher.used.values())));
    await writeFile(tx.path('provenance.jsonld'), `${JSON.stringify(provenanceDocument(recipe.name, tool, records), null, 2)}\n`);
    await writeFile(tx.path('failures.jsonl'), failures.map((f) => JSON.stringify(f)).join('\n') + (failures.length ? '\n' : ''));
    await writeFile(tx.path('ATTRIBUTION.md'), attributionMarkdown(recipe.name, records));
    await rm(staging, { recursive: true, force: true });
    await tx.commit();
    const perSplit = Object.fromEntries(SPLITS.map((s) => [s, records.filter((r) => r.split === s).length]));
    return {
      patches: records.length,
      perSplit,
      crops: plan.crops.length,
      cropsFailed: plan.crops.length - harvest.served.size + failures.filter((f) => f.stage === 'crop' && harvest.served.has(f.key)).length,
      failures: failures.length,
      nearDuplicatePairs: pairs.length,
      harvest: harvest.summary,
      out: recipe.output,
    };
  } catch (err) {
    await tx.abort();
    throw err;
  }
}
