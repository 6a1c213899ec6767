import { mkdir, readdir, readFile, appendFile, rm } from 'node:fs/promises';
import { dirname, join, relative } from 'node:path';
import { FetchError, InputError, UsageError } from './errors.ts';
import { SPLITS, type SplitName } from './split/assign.ts';
import { ContentCache, ResponseFacts } from './net/cache.ts';
import { Fetcher, FetchEvent, FetchMode } from './net/fetcher.ts';
import { canvasFacts } from './dataset/canvas-facts.ts';
import { lockFrom, lockedSplits, readLock, writeLock, LockFile } from './net/lock.ts';
import { DEFAULT_RETRY_POLICY } from './net/retry-policy.ts';
import { harvestCrops, HarvestResult } from './harvest/harvest.ts';
import { PlanCollector, DatasetPlan } from './plan/plan-dataset.ts';
import { planByManifest, ServiceSummary } from './plan-by-manifest.ts';
import type { CropRequest } from './plan/crop-request.ts';
import type { Recipe } from './recipe/types.ts';
import type { ResolvedSources } from './sources/resolve.ts';
import { FolderTransaction } from './dataset/write-folder.ts';
import { serialiseLock } from './net/lock.ts';
import { sha256Hex } from './util/hash.ts';
import { forEachLine } from './util/text-file.ts';

export interface BuildSummary {
  patches: number;
  perSplit: Record<string, number>;
  crops: number;
  cropsFailed: number;
  /** Crops whose patches came from cut results already in the cache (a rebuild, or a merge of shards that cut). */
  cropsCutFromCache: number;
  failures: number;
  nearDuplicatePairs: number;
  harvest: HarvestResult['summary'];
  out: string;
}

export interface RunOptions {
  cacheDir?: string;
  mode?: FetchMode;
  concurrency?: number;
  onEvent?: (e: FetchEvent) => void;
  warn?: (message: string) => void;
  onProgress?: (stage: 'fetch' | 'cut', done: number, total: number) => void;
  /** Crops stitched at once (CPU work). */
  cpuConcurrency?: number;
  /** A previous index.jsonl whose groups keep their splits (`--keep-splits`). */
  keepSplits?: string;
  /** Assign splits afresh, ignoring the previous assignment in the lock. */
  freshSplits?: boolean;
  /** Write `<name>.lock.json` beside the recipe (default true; verify does not). */
  writeLock?: boolean;
  /** Problems in documents from other servers are fatal (exit 2) instead of failure records. */
  strict?: boolean;
  /** Injected clock for tests. */
  sleep?: (ms: number) => Promise<void>;
}

export function defaultCacheDir(recipe: Recipe): string {
  return join(dirname(recipe.file), '.swatchbook-cache');
}

/** The lock file that sits beside the recipe: `<name>.lock.json`. */
export function lockPathFor(recipe: Recipe): string {
  return join(dirname(recipe.file), `${recipe.name}.lock.json`);
}

export async function openFetcher(recipe: Recipe, opts: RunOptions): Promise<Fetcher> {
  const mode = opts.mode ?? 'online';
  let lock: LockFile | undefined;
  if (mode === 'frozen') {
    lock = await readLock(lockPathFor(recipe));
    if (!lock) throw new UsageError(`--frozen needs the lock file ${lockPathFor(recipe)}; run once without --frozen to write it`);
  }
  const n = recipe.network;
  const cache = new ContentCache(opts.cacheDir ?? defaultCacheDir(recipe));
  await cache.sweepTemp();
  return new Fetcher({
    cache,
    mode,
    ...(lock ? { lock } : {}),
    concurrency: opts.concurrency ?? n.concurrency,
    perHost: n.perHost,
    perHostRate: n.perHostRate,
    timeoutMs: n.timeoutMs,
    retry: { ...DEFAULT_RETRY_POLICY, retries: n.retries, seed: recipe.seed },
    ...(n.contact ? { contact: n.contact } : {}),
    ...(n.allowHosts ? { allowHosts: n.allowHosts } : {}),
    guardNonPublic: true,
    ...(opts.onEvent ? { onEvent: opts.onEvent } : {}),
    ...(opts.warn ? { warn: opts.warn } : {}),
    ...(opts.sleep ? { sleep: opts.sleep } : {}),
  });
}

/** What planning read: the documents, failures and notes of the sources, how many manifests, which image services. */
export type PlannedSources = Pick<ResolvedSources, 'documents' | 'failures' | 'notes'> & { manifests: number; services: ServiceSummary[] };

export interface Planned {
  sources: PlannedSources;
  plan: DatasetPlan;
  fetcher: Fetcher;
}

/**
 * Resolves sources (fetching manifests, annotations and info.json) and plans
 * crops and patches, a manifest at a time (see `planByManifest`); the plan is kept in memory.
 */
export async function planRecipe(recipe: Recipe, opts: RunOptions = {}): Promise<Planned> {
  const fetcher = await openFetcher(recipe, opts);
  const collector = new PlanCollector();
  const { sources, manifests, services, ...totals } = await planByManifest(recipe, fetcher, collector, { strict: !!opts.strict, services: true });
  return { sources: { ...sources, manifests, services: services ?? [] }, plan: collector.plan(totals), fetcher };
}

/**
 * Canvas thumbnails for the report: small crops of each painted image, fetched
 * and locked like any request. One that fails leaves its map without a picture;
 * it is no failure of the dataset. `keep` picks some (a shard takes those on its hosts).
 */
export async function harvestThumbnails(plan: DatasetPlan, fetcher: Fetcher, keep: (crop: CropRequest) => boolean = () => true): Promise<void> {
  await harvestCrops(canvasFacts(plan).flatMap((c) => (c.thumbnail && keep(c.thumbnail.crop) ? [c.thumbnail.crop] : [])), fetcher);
}

/** Plans, then fetches every crop piece into the cache, and writes the lock beside the recipe. */
export async function harvestRecipe(recipe: Recipe, opts: RunOptions = {}): Promise<Planned & { harvest: HarvestResult }> {
  const planned = await planRecipe(recipe, opts);
  // Thumbnails go through the same fetcher (its limits hold for both) alongside the crops, not after them.
  const [harvest] = await Promise.all([harvestCrops(planned.plan.crops, planned.fetcher, { onProgress: (d, t) => opts.onProgress?.('fetch', d, t) }), harvestThumbnails(planned.plan, planned.fetcher)]);
  if ((opts.mode ?? 'online') !== 'frozen') {
    // The harvest assigns no splits: the last build's stay in the lock.
    const before = await readLock(lockPathFor(recipe));
    await writeLock(lockPathFor(recipe), lockFrom(planned.fetcher.used.values(), before?.splits));
  }
  await logRun(recipe, opts, 'harvest', harvest.summary);
  return { ...planned, harvest };
}

/**
 * Plans, harvests and builds the dataset folder, one stage after the other:
 * harvest (pieces into the cache; their hashes), cut (pieces read from the cache
 * by sha256, never through the fetcher), assemble (pure: near-duplicates, splits,
 * records, card), write (into a folder transaction, renamed into place when
 * complete). The lock is built once, from what the harvest used.
 */
export async function runRecipe(recipe: Recipe, opts: RunOptions = {}): Promise<Planned & { build: BuildSummary }> {
  const planned = await planRecipe(recipe, opts);
  const { plan, sources, fetcher } = planned;
  const [harvest] = await Promise.all([harvestCrops(plan.crops, fetcher, { onProgress: (d, t) => opts.onProgress?.('fetch', d, t) }), harvestThumbnails(plan, fetcher)]);
  const build = await buildFromHarvest(recipe, opts, { plan, sources, harvest, lockFacts: fetcher.used.values(), cache: fetcher.options.cache });
  return { ...planned, build };
}

/** What the build stages need from planning and harvesting, wherever those ran (one machine, or shards merged). */
export interface HarvestedInputs {
  plan: DatasetPlan;
  sources: Pick<ResolvedSources, 'failures' | 'notes' | 'documents'>;
  harvest: Pick<HarvestResult, 'served' | 'failures' | 'summary'>;
  /** Every response the documents, info.json, crops and thumbnails came from (the lock). */
  lockFacts: Iterable<ResponseFacts>;
  /** The cache holding every piece by sha256. */
  cache: ContentCache;
}

/**
 * The build after the harvest: cut (pieces read from the cache by sha256),
 * assemble (pure), write (a folder transaction renamed into place when complete);
 * the lock is built once, from the responses used, with the split assignment.
 */
export async function buildFromHarvest(recipe: Recipe, opts: RunOptions, input: HarvestedInputs): Promise<BuildSummary> {
  // The cut, assemble and write stages (and the image library) load only for builds: plan and harvest start faster.
  const [{ cutPatches }, { assembleDataset }, { toolVersions }, { writeDataset }] = await Promise.all([
    import('./cut/cut-patches.ts'),
    import('./dataset/assemble.ts'),
    import('./dataset/tool-versions.ts'),
    import('./dataset/write-dataset.ts'),
  ]);
  const { plan, sources, harvest } = input;
  const previousSplits = opts.keepSplits ? await readPreviousSplits(opts.keepSplits) : undefined;
  const { seed, split } = recipe;
  const lockedBefore = opts.freshSplits ? undefined : lockedSplits(await readLock(lockPathFor(recipe)), seed, split.groupBy, split.fractions);
  const tx = await FolderTransaction.begin(recipe.output);
  let build: BuildSummary;
  let lock: LockFile;
  try {
    const staging = tx.path('.staging');
    await mkdir(staging, { recursive: true });
    const cut = await cutPatches(plan, harvest.served, input.cache, staging, {
      ...(opts.cpuConcurrency ? { cpuConcurrency: opts.cpuConcurrency } : {}),
      onProgress: (d, t) => opts.onProgress?.('cut', d, t),
    });
    const tool = toolVersions();
    const data = assembleDataset({ recipe, sources, plan, served: harvest.served, harvestFailures: harvest.failures, cuts: cut.cuts, cutFailures: cut.failures, resampledPieces: cut.resampledPieces, tool, ...(previousSplits ? { previousSplits } : {}), ...(lockedBefore ? { lockedSplits: lockedBefore } : {}) });
    lock = lockFrom(input.lockFacts, { seed, groupBy: split.groupBy, fractions: split.fractions, groups: Object.fromEntries(data.assignment.byGroup), ...(data.churn ? { churn: data.churn } : {}) });
    await writeDataset(tx, staging, data, serialiseLock(lock), recipe, tool);
    await tx.commit();
    build = {
      patches: data.records.length,
      perSplit: data.perSplit,
      crops: plan.crops.length,
      cropsFailed: plan.crops.length - harvest.served.size + cut.failures.length,
      cropsCutFromCache: cut.reusedCrops,
      failures: data.failures.length,
      nearDuplicatePairs: data.pairs.length,
      harvest: harvest.summary,
      out: recipe.output,
    };
  } catch (err) {
    await tx.abort();
    throw err;
  }
  if ((opts.mode ?? 'online') !== 'frozen' && opts.writeLock !== false) await writeLock(lockPathFor(recipe), lock);
  await logRun(recipe, opts, 'build', build);
  return build;
}

/** The split of every group in a previous index.jsonl (the user's file: a problem is exit 2 with the line). */
async function readPreviousSplits(path: string): Promise<Map<string, SplitName>> {
  const out = new Map<string, SplitName>();
  try {
    await forEachLine(path, (line, n) => {
      let r: { group?: unknown; split?: unknown };
      try {
        r = JSON.parse(line);
      } catch {
        throw new InputError('E_RECIPE_INVALID', path, `/${n}`, 'line is not JSON (expected the index.jsonl of a swatchbook dataset)');
      }
      if (typeof r.group !== 'string' || !SPLITS.includes(r.split as SplitName)) throw new InputError('E_RECIPE_INVALID', path, `/${n}`, 'expected a record with "group" and "split"');
      if (!out.has(r.group)) out.set(r.group, r.split as SplitName);
    });
  } catch (err) {
    if (err instanceof InputError) throw err;
    throw new InputError('E_RECIPE_INVALID', path, '', `cannot read the previous index for --keep-splits (${(err as NodeJS.ErrnoException).code ?? (err as Error).message})`);
  }
  return out;
}

/** Appends a line with wall-clock times to the run log in the cache (kept out of the hashed dataset). */
async function logRun(recipe: Recipe, opts: RunOptions, step: string, summary: unknown): Promise<void> {
  const dir = join(opts.cacheDir ?? defaultCacheDir(recipe), 'runs');
  await mkdir(dir, { recursive: true });
  await appendFile(join(dir, `${recipe.name}.jsonl`), `${JSON.stringify({ at: new Date().toISOString(), step, summary })}\n`);
}

/** sha256 of every file below a folder, by relative path. */
export async function hashTree(dir: string): Promise<Map<string, string>> {
  const out = new Map<string, string>();
  const walk = async (d: string) => {
    for (const e of await readdir(d, { withFileTypes: true })) {
      const p = join(d, e.name);
      if (e.isDirectory()) await walk(p);
      else out.set(relative(dir, p).split('\\').join('/'), sha256Hex(await readFile(p)));
    }
  };
  await walk(dir);
  return new Map([...out.entries()].sort((a, b) => (a[0] < b[0] ? -1 : 1)));
}

export interface VerifyReport {
  identical: boolean;
  files: number;
  differing: { file: string; expected?: string; actual?: string }[];
}

/** Rebuilds from the cache only into a scratch folder and compares every file with the existing dataset. */
export async function verifyRecipe(recipe: Recipe, opts: RunOptions = {}): Promise<VerifyReport> {
  let existing: Map<string, string>;
  try {
    existing = await hashTree(recipe.output);
  } catch {
    throw new UsageError(`there is no dataset at ${recipe.output} to verify; build it first`);
  }
  const scratch = `${recipe.output}.verify-${process.pid}`;
  try {
    await runRecipe({ ...recipe, output: scratch }, { ...opts, mode: 'offline', writeLock: false });
    const rebuilt = await hashTree(scratch);
    const differing: VerifyReport['differing'] = [];
    for (const file of new Set([...existing.keys(), ...rebuilt.keys()])) {
      if (existing.get(file) !== rebuilt.get(file)) differing.push({ file, ...(existing.has(file) ? { expected: existing.get(file) } : {}), ...(rebuilt.has(file) ? { actual: rebuilt.get(file) } : {}) });
    }
    differing.sort((a, b) => (a.file < b.file ? -1 : 1));
    return { identical: differing.length === 0, files: existing.size, differing };
  } finally {
    await rm(scratch, { recursive: true, force: true });
  }
}

export interface DriftReport {
  checked: number;
  changed: { url: string; kind: 'manifest' | 'info' | 'image' | 'other'; locked: string; now: string }[];
  unreachable: { url: string; reason: string }[];
}

/** Asks the servers again for every locked URL (politely) and reports which bodies changed. Never touches the dataset. */
export async function refetchDrift(recipe: Recipe, opts: RunOptions = {}): Promise<DriftReport> {
  const lock = await readLock(lockPathFor(recipe));
  if (!lock) throw new UsageError(`no lock file at ${lockPathFor(recipe)}; nothing to compare with`);
  const fetcher = await openFetcher(recipe, { ...opts, mode: 'refresh' });
  const report: DriftReport = { checked: 0, changed: [], unreachable: [] };
  const urls = Object.keys(lock.entries).sort();
  await Promise.all(
    urls.map(async (url) => {
      const entry = lock.entries[url];
      const kind = /\/info\.json$/.test(url) ? 'info' : entry.contentType.startsWith('image/') ? 'image' : /json/.test(entry.contentType) ? 'manifest' : 'other';
      try {
        const got = await fetcher.get(url, kind === 'image' ? 'image' : 'json');
        report.checked++;
        if (got.facts.sha256 !== entry.sha256) report.changed.push({ url, kind, locked: entry.sha256, now: got.facts.sha256 });
      } catch (err) {
        report.unreachable.push({ url, reason: err instanceof FetchError ? err.reason : (err as Error).message });
      }
    }),
  );
  report.changed.sort((a, b) => (a.url < b.url ? -1 : 1));
  report.unreachable.sort((a, b) => (a.url < b.url ? -1 : 1));
  return report;
}
