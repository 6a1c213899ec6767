/**
 * Sharded runs (I/O shell around the pure partition): `plan --shards` writes the
 * plan once, `harvest --plan --shard K` fetches one shard's crops into its own
 * cache, `merge` unions the caches (every object's hash verified, a URL with two
 * different bodies refused) and runs the same build stages as a single `run`, so
 * the merged dataset is byte-identical to one machine's.
 */
import { mkdir, readFile, rename, rm } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { UsageError } from '../errors.ts';
import { harvestCrops, HarvestResult, PieceOutcome } from '../harvest/harvest.ts';
import { processTag, writeFileAtomic } from '../net/atomic-write.ts';
import { mapLines, writeTextParts } from '../util/text-file.ts';
import { ContentCache, ResponseFacts } from '../net/cache.ts';
import type { DatasetPlan } from '../plan/plan-dataset.ts';
import { buildFromHarvest, BuildSummary, defaultCacheDir, harvestThumbnails, openFetcher, RunOptions } from '../pipeline.ts';
import { planByManifest } from '../plan-by-manifest.ts';
import { ExternalSort } from '../util/external-sort.ts';
import { loadRecipe } from '../recipe/load.ts';
import type { Recipe } from '../recipe/types.ts';
import type { ResolvedSources } from '../sources/resolve.ts';
import { byString } from '../util/hash.ts';
import { cropHost, HostLoad, partitionLoads, ShardPlan } from './partition.ts';

export const PLAN_DIR_VERSION = 3;

/** The parts of a plan that grow with the dataset: written one element per line. */
const PLAN_LISTS = ['crops', 'patches', 'regions', 'skipped'] as const;

/** `plan.jsonl` of a plan folder: everything a shard or the merge needs besides the recipe file. */
export interface PlanFolder {
  version: number;
  /** The recipe, by absolute path: shards and the merge read it there (a shared file system). */
  recipeFile: string;
  shards: ShardPlan[];
  plan: DatasetPlan;
  sources: Pick<ResolvedSources, 'failures' | 'notes' | 'documents'>;
  /** The responses planning used (documents, info.json): the first part of the lock. */
  lockFacts: ResponseFacts[];
  /** Hosts the user named (recipe, local files): the shards may reach them even on private addresses, as planning could. */
  trustedHosts: string[];
}

/** `shard-K/result.json`: what one shard harvested. */
export interface ShardResult {
  version: number;
  shard: number;
  served: Record<string, PieceOutcome[]>;
  failures: HarvestResult['failures'];
  summary: HarvestResult['summary'];
  lockFacts: ResponseFacts[];
}

export const shardDir = (dir: string, k: number) => join(dir, `shard-${k}`);
export const shardCacheDir = (dir: string, k: number) => join(shardDir(dir, k), 'cache');

/** What `planShards` wrote, for the command's summary. */
export interface PlannedShards {
  shards: ShardPlan[];
  crops: number;
  patches: number;
  sources: PlanFolder['sources'];
}

/**
 * Plans once (documents and info.json into the recipe's cache) and writes the
 * plan folder with its partition. What planning yields goes straight to a
 * sorting writer (sorted runs on disk, merged into `plan.jsonl`), so the plan of a
 * million patches is never held: memory is the sources' and a bounded buffer.
 */
export async function planShards(recipe: Recipe, n: number, dir: string, opts: RunOptions & { sortRunChars?: number } = {}): Promise<PlannedShards> {
  const fetcher = await openFetcher(recipe, opts);
  await mkdir(dir, { recursive: true });
  const sorter = new ExternalSort(join(dir, `.tmp-${processTag}-sort`), opts.sortRunChars);
  let patches = 0;
  // Lines sort by list (the order planFolderLines writes them in), then as DatasetPlan sorts each list. Lines keyed '!' come first and are not written: each
  // crop's host with its key, and with each request, counted where the merge brings equal keys together, so
  // the hosts' loads are known before the first line is written without a set of every crop and URL in memory.
  const { sources, manifests: _manifests, ...totals } = await planByManifest(recipe, fetcher, {
    crop: (crop, ctx) => {
      const host = cropHost(crop);
      sorter.add(['!', host, 'crop', crop.key], '');
      for (const p of crop.stitch.pieces) sorter.add(['!', host, 'url', p.url], '');
      sorter.add(['0', crop.key], JSON.stringify({ crops: crop }));
      sorter.add(['4', crop.key], JSON.stringify({ context: crop.key, value: ctx }));
    },
    patch: (p) => {
      patches++;
      sorter.add(['1', p.id], JSON.stringify({ patches: p }));
    },
    region: (r) => sorter.add(['2', r.key], JSON.stringify({ regions: r })),
    skip: (x) => sorter.add(['3', x.key, x.reason], JSON.stringify({ skipped: x })),
  }, { strict: !!opts.strict });
  const folderSources = { failures: sources.failures, notes: sources.notes ?? [], documents: sources.documents };
  // Equal '!' keys count once (a crop or a request named twice); a crop or context given again keeps its first line.
  // Read by hand up to the first plan line (a for…of left early would close the merge).
  const lines = sorter.sortedEntries({ dropRepeats: (key) => key[0] === '!' || key[0] === '0' || key[0] === '4' });
  const loads = new Map<string, HostLoad>();
  let next = lines.next();
  for (; !next.done && next.value.key[0] === '!'; next = lines.next()) {
    const [, host, kind] = next.value.key as [string, string, string];
    let load = loads.get(host);
    if (!load) loads.set(host, (load = { crops: 0, requests: 0 }));
    if (kind === 'crop') load.crops++;
    else load.requests++;
  }
  const shards = partitionLoads(loads, n);
  const crops = shards.reduce((a, s) => a + s.crops, 0);
  const head: PlanFolder = {
    version: PLAN_DIR_VERSION,
    recipeFile: resolve(recipe.file),
    shards,
    plan: { crops: [], patches: [], contexts: {}, regions: [], skipped: [], ...totals },
    sources: folderSources,
    lockFacts: [...fetcher.used.values()].sort((a, b) => byString(a.url, b.url)),
    trustedHosts: [...new Set(fetcher.options.trustedHosts ?? [])].sort(byString),
  };
  const tmp = join(dir, `.tmp-${processTag}-plan.jsonl`);
  await writeTextParts(tmp, planLines(JSON.stringify(head), next.done ? undefined : next.value, { [Symbol.iterator]: () => lines }));
  await rename(tmp, join(dir, PLAN_FILE));
  await writeFileAtomic(join(dir, 'shards.json'), `${JSON.stringify(shards, null, 2)}\n`);
  return { shards, crops, patches, sources: folderSources };
}

/** The plan file's lines: the first line, then every sorted line. */
function* planLines(head: string, first: { line: string } | undefined, rest: Iterable<{ line: string }>): Generator<string> {
  yield `${head}\n`;
  if (first) yield `${first.line}\n`;
  for (const { line } of rest) yield `${line}\n`;
}

export const PLAN_FILE = 'plan.jsonl';

/**
 * The plan folder as JSON Lines: a first line with everything but the plan's lists and
 * contexts, then one line per crop, patch, region, skip and crop context. A plan of a
 * million patches is over a gigabyte of JSON, more than one string can hold, so it is
 * never one JSON text. (`planShards` writes the same lines through a sorting writer.)
 */
export function* planFolderLines(folder: PlanFolder): Generator<string> {
  const { plan } = folder;
  yield `${JSON.stringify({ ...folder, plan: { ...plan, crops: [], patches: [], regions: [], skipped: [], contexts: {} } })}\n`;
  for (const list of PLAN_LISTS) for (const item of plan[list]) yield `${JSON.stringify({ [list]: item })}\n`;
  for (const key of Object.keys(plan.contexts)) yield `${JSON.stringify({ context: key, value: plan.contexts[key] })}\n`;
}

export async function readPlanFolder(dir: string): Promise<PlanFolder> {
  const file = join(dir, PLAN_FILE);
  let folder: PlanFolder | undefined;
  try {
    await mapLines(file, (line, n) => {
      const value = JSON.parse(line) as Record<string, unknown>;
      if (n === 0) {
        folder = value as unknown as PlanFolder;
        if (folder.version !== PLAN_DIR_VERSION) throw new UsageError(`${file} is of version ${folder.version}, this swatchbook reads ${PLAN_DIR_VERSION}`);
        return;
      }
      const plan = folder!.plan;
      if (typeof value.context === 'string') plan.contexts[value.context] = value.value as DatasetPlan['contexts'][string];
      else {
        const list = PLAN_LISTS.find((l) => l in value);
        if (!list) throw new Error(`line ${n + 1} is not part of a plan`);
        (plan[list] as unknown[]).push(value[list]);
      }
    });
  } catch (err) {
    if (err instanceof UsageError) throw err;
    throw new UsageError(`${file} cannot be read (${(err as NodeJS.ErrnoException).code ?? (err as Error).message}); write it with swatchbook plan <recipe> --shards N --out-plan ${dir}`);
  }
  if (!folder) throw new UsageError(`${file} is empty; write it with swatchbook plan <recipe> --shards N --out-plan ${dir}`);
  return folder;
}

/**
 * Harvests shard `k` of a plan folder into its own cache (default
 * `<dir>/shard-K/cache`): its crops and the thumbnails of the canvases on its
 * hosts. A shard killed and started again resumes from its cache.
 */
export async function harvestShard(dir: string, k: number, opts: RunOptions = {}): Promise<ShardResult> {
  const folder = await readPlanFolder(dir);
  const shard = folder.shards[k];
  if (!Number.isInteger(k) || !shard) throw new UsageError(`shard ${k} does not exist: the plan has shards 0 to ${folder.shards.length - 1}`);
  const recipe = await loadRecipe(folder.recipeFile);
  const fetcher = await openFetcher(recipe, { ...opts, cacheDir: opts.cacheDir ?? shardCacheDir(dir, k) });
  for (const h of folder.trustedHosts ?? []) fetcher.trustHost(h);
  const hosts = new Set(shard.hosts);
  const crops = folder.plan.crops.filter((c) => hosts.has(cropHost(c)));
  const keys = new Set(crops.map((c) => c.key));
  const harvest = await harvestCrops(crops, fetcher, { onProgress: (d, t) => opts.onProgress?.('fetch', d, t) });
  // The shard cuts its crops too (the CPU-heavy part): the cut results go into its cache, keyed by their
  // inputs, and the merge copies them, so it only assembles and writes.
  const { cutPatches } = await import('../cut/cut-patches.ts');
  const staging = join(shardDir(dir, k), '.cut-staging');
  await rm(staging, { recursive: true, force: true });
  await mkdir(staging, { recursive: true });
  await cutPatches({ crops, patches: folder.plan.patches.filter((p) => keys.has(p.cropKey)) }, harvest.served, fetcher.options.cache, staging, { onProgress: (d, t) => opts.onProgress?.('cut', d, t) });
  await rm(staging, { recursive: true, force: true });
  await harvestThumbnails(folder.plan, fetcher, (crop) => hosts.has(cropHost(crop)));
  const result: ShardResult = {
    version: PLAN_DIR_VERSION,
    shard: k,
    served: Object.fromEntries([...harvest.served.entries()].sort((a, b) => byString(a[0], b[0]))),
    failures: harvest.failures,
    summary: harvest.summary,
    lockFacts: [...fetcher.used.values()].sort((a, b) => byString(a.url, b.url)),
  };
  await mkdir(shardDir(dir, k), { recursive: true });
  await writeFileAtomic(join(shardDir(dir, k), 'result.json'), `${JSON.stringify(result)}\n`);
  return result;
}

/**
 * Merges the shards of a plan folder: reads every shard's result, copies every
 * body it used from the shard caches given into the recipe's cache (each hash
 * verified), refuses a URL that two shards saw with different bytes, and builds
 * the dataset with the same stages as `run`.
 */
export async function mergeShards(dir: string, caches: readonly string[], opts: RunOptions & { out?: string } = {}): Promise<BuildSummary & { cacheDir: string }> {
  const folder = await readPlanFolder(dir);
  const loaded = await loadRecipe(folder.recipeFile);
  const recipe = opts.out ? { ...loaded, output: opts.out } : loaded;
  const results: ShardResult[] = [];
  for (const s of folder.shards) {
    try {
      results.push(JSON.parse(await readFile(join(shardDir(dir, s.index), 'result.json'), 'utf8')));
    } catch {
      throw new UsageError(`shard ${s.index} has no result (${join(shardDir(dir, s.index), 'result.json')}): run swatchbook harvest --plan ${dir} --shard ${s.index} first`);
    }
  }
  const cacheDir = opts.cacheDir ?? defaultCacheDir(recipe);
  const target = new ContentCache(cacheDir);
  const sources = (caches.length ? caches : folder.shards.map((s) => shardCacheDir(dir, s.index))).map((c) => new ContentCache(resolve(c)));
  const facts = new Map<string, ResponseFacts & { from: string }>();
  for (const f of folder.lockFacts) facts.set(f.url, { ...f, from: 'the plan' });
  for (const r of results) {
    for (const f of r.lockFacts) {
      const seen = facts.get(f.url);
      if (seen && seen.sha256 !== f.sha256) throw new UsageError(`${f.url}: ${seen.from} and shard ${r.shard} hold different bytes for this URL (sha256 ${seen.sha256.slice(0, 12)}… and ${f.sha256.slice(0, 12)}…); the source changed between them: harvest again`);
      if (seen) continue;
      facts.set(f.url, { ...f, from: `shard ${r.shard}` });
      let body: Buffer | undefined;
      for (const c of sources) if ((body = await c.getBody(f.sha256))) break; // getBody verifies the hash
      if (!body && !(await target.getBody(f.sha256))) throw new UsageError(`${f.url}: no cache given holds its body (sha256 ${f.sha256}); pass shard ${r.shard}'s cache to merge`);
      if (body) await target.putBody(body);
      await target.putRef(f);
    }
  }
  // The shards' cut results: each record and the patch files it names, hashes verified.
  for (const c of sources) await copyCutResults(c, target);
  const served = new Map<string, PieceOutcome[]>();
  for (const r of results) for (const [k, v] of Object.entries(r.served)) served.set(k, v);
  const summary = results.reduce<HarvestResult['summary']>(
    (a, r) => ({ crops: a.crops + r.summary.crops, served: a.served + r.summary.served, failed: a.failed + r.summary.failed, requests: a.requests + r.summary.requests, fromCache: a.fromCache + r.summary.fromCache, bytes: a.bytes + r.summary.bytes, retries: a.retries + r.summary.retries, uniquePieces: a.uniquePieces + r.summary.uniquePieces }),
    { crops: 0, served: 0, failed: 0, requests: 0, fromCache: 0, bytes: 0, retries: 0, uniquePieces: 0 },
  );
  const lockFacts = [...facts.values()].map(({ from: _from, ...f }) => f);
  const build = await buildFromHarvest(recipe, opts, { plan: folder.plan, sources: folder.sources, harvest: { served, failures: results.flatMap((r) => r.failures), summary }, lockFacts, cache: target });
  return { ...build, cacheDir };
}

/** Copies every cut result of a shard cache (derived records and the patch bodies they name) into the target. */
async function copyCutResults(from: ContentCache, to: ContentCache): Promise<void> {
  for (const key of await from.derivedKeys()) {
    const record = await from.getDerived<{ cuts?: Record<string, { sha256: string }> }>(key);
    if (!record?.cuts) continue;
    let complete = true;
    for (const cut of Object.values(record.cuts)) {
      const body = await from.getBody(cut.sha256); // verified against its hash
      if (!body) {
        complete = false;
        break;
      }
      await to.putBody(body);
    }
    if (complete) await to.putDerived(key, record);
  }
}
