import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import pLimit from 'p-limit';
import { FailureRecord, ImageError, reasonOf } from '../errors.ts';
import type { PieceOutcome } from '../harvest/harvest.ts';
import { encodePng, extractRgb, imageLibraryVersions } from '../image/pixels.ts';
import { dHash } from '../patch/dhash.ts';
import type { DatasetPlan, PatchPlan } from '../plan/plan-dataset.ts';
import { sha256Hex } from '../util/hash.ts';
import { memoisedDecoder, stitchCrop } from './stitch.ts';

/**
 * What the cut stage reads fetched pieces from and keeps its results in: the
 * content-addressed cache, seen only through this narrow face (bodies by sha256,
 * derived results by key). The cut stage never asks a server for anything.
 */
export interface ContentStore {
  getBody(sha256: string): Promise<Buffer | undefined>;
  putBody(body: Uint8Array): Promise<string>;
  getDerived<T>(key: string): Promise<T | undefined>;
  putDerived(key: string, value: unknown): Promise<void>;
}

/** One cut patch: the sha256 of its PNG and its difference hash. */
export interface Cut {
  sha256: string;
  phash: string;
  textured: boolean;
}

export interface CutResult {
  /** By patch id. */
  cuts: Map<string, Cut>;
  /** Pieces a server returned ±1 pixel off (within tolerance) and that were resampled to the planned size. */
  resampledPieces: number;
  failures: FailureRecord[];
  /** Crops whose cut results came from the cache (not stitched again). */
  reusedCrops: number;
}

export interface CutOptions {
  /** Crops stitched at once (CPU work). */
  cpuConcurrency?: number;
  onProgress?: (done: number, total: number) => void;
}

/** Bump when cutting, encoding or hashing changes, so cached cut results are not reused. */
const DERIVED_VERSION = 2;

/**
 * Cuts the planned patches of every served crop: pieces are read from the store
 * by the sha256 the harvest recorded, stitched, cut, encoded as PNG with fixed
 * settings, written to `staging/<patchId>.png`, and hashed. Results are cached
 * under the hash of everything they depend on, so a warm rebuild copies instead of
 * re-encoding (pass 1, I/O); the rest are cut on `cpuConcurrency` workers (pass 2).
 * The result depends only on the plan and the piece bytes, never on arrival order.
 */
export async function cutPatches(plan: Pick<DatasetPlan, 'crops' | 'patches'>, served: ReadonlyMap<string, readonly PieceOutcome[]>, store: ContentStore, staging: string, opts: CutOptions = {}): Promise<CutResult> {
  const byCrop = new Map<string, PatchPlan[]>();
  for (const p of plan.patches) {
    const list = byCrop.get(p.cropKey);
    if (list) list.push(p);
    else byCrop.set(p.cropKey, [p]);
  }
  const cropByKey = new Map(plan.crops.map((c) => [c.key, c]));
  const lib = imageLibraryVersions();
  const derivedKeyOf = (key: string) =>
    sha256Hex(JSON.stringify({ v: DERIVED_VERSION, tool: [lib.sharp, lib.libvips], stitch: cropByKey.get(key)!.stitch, pieces: served.get(key)!.map((o) => o.sha256), patches: (byCrop.get(key) ?? []).map((p) => [p.id, p.inCrop]) }));

  const cuts = new Map<string, Cut>();
  const resampledByCrop = new Map<string, number>();
  const failures: FailureRecord[] = [];
  const keys = [...served.keys()];
  let done = 0;

  // Pass 1 (I/O): crops whose cut results are cached and intact are copied.
  const reused = new Set<string>();
  const ioLimit = pLimit(16);
  await Promise.all(
    keys.map((key) =>
      ioLimit(async () => {
        const patches = byCrop.get(key) ?? [];
        const derived = await store.getDerived<{ cuts: Record<string, Cut>; resampledPieces: number }>(derivedKeyOf(key));
        const known = derived?.cuts;
        if (!known || !patches.every((p) => known[p.id])) return;
        const bodies = await Promise.all(patches.map((p) => store.getBody(known[p.id].sha256)));
        if (!bodies.every((b) => b !== undefined)) return;
        await Promise.all(patches.map((p, i) => writeFile(join(staging, `${p.id}.png`), bodies[i]!)));
        for (const p of patches) cuts.set(p.id, known[p.id]);
        resampledByCrop.set(key, derived!.resampledPieces);
        reused.add(key);
        opts.onProgress?.(++done, keys.length);
      }),
    ),
  );

  // Pass 2 (CPU): stitch, cut, encode and hash the rest.
  const cpuLimit = pLimit(opts.cpuConcurrency ?? 2);
  const decode = memoisedDecoder();
  await Promise.all(
    keys.filter((key) => !reused.has(key)).map((key) =>
      cpuLimit(async () => {
        const crop = cropByKey.get(key)!;
        const patches = byCrop.get(key) ?? [];
        try {
          // The harvest recorded the pieces in the order of the stitch recipe.
          const outcomes = served.get(key)!;
          const bodies = new Map<string, Buffer>();
          for (const [i, piece] of crop.stitch.pieces.entries()) {
            const body = await store.getBody(outcomes[i].sha256);
            if (!body) throw new ImageError(`piece ${piece.url} (sha256 ${outcomes[i].sha256}) is not in the cache`);
            bodies.set(piece.url, body);
          }
          const { image, resampledPieces } = await stitchCrop(crop, (u) => bodies.get(u), decode);
          const made: Record<string, Cut> = {};
          for (const p of patches) {
            const patch = extractRgb(image, p.inCrop.x, p.inCrop.y, p.inCrop.w, p.inCrop.h);
            const png = await encodePng(patch);
            const h = dHash(patch.data, patch.width, patch.height);
            await writeFile(join(staging, `${p.id}.png`), png);
            made[p.id] = { sha256: await store.putBody(png), phash: h.hash, textured: h.textured };
          }
          for (const [id, cut] of Object.entries(made)) cuts.set(id, cut);
          resampledByCrop.set(key, resampledPieces);
          await store.putDerived(derivedKeyOf(key), { cuts: made, resampledPieces });
        } catch (err) {
          failures.push({ stage: 'crop', key, reason: `could not be stitched: ${reasonOf(err)}` });
        } finally {
          opts.onProgress?.(++done, keys.length);
        }
      }),
    ),
  );
  return { cuts, resampledPieces: [...resampledByCrop.values()].reduce((a, b) => a + b, 0), failures, reusedCrops: reused.size };
}
