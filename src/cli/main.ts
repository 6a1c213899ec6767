import { Command, CommanderError, Option } from 'commander';
import { mkdir, writeFile, access } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import { SwatchbookError, UsageError, redactUrl } from '../errors.ts';
import type { Recipe } from '../recipe/types.ts';
import type { RunOptions } from '../pipeline.ts';
import { DEFAULT_DEMO_PORT } from '../demo/defaults.ts';
import { VERSION } from '../version.ts';
import { Reporter } from './reporter.ts';
import type { FetchMode } from '../net/fetcher.ts';

// The heavy modules (sharp, got, ajv, the pipeline) are imported only by the commands that use them,
// so `--version`, `--help` and usage errors start as fast as Node itself.
const pipeline = () => import('../pipeline.ts');

interface Shared {
  out?: string;
  cache?: string;
  concurrency?: string;
  offline?: boolean;
  frozen?: boolean;
  json?: boolean;
  quiet?: boolean;
  debug?: boolean;
  strict?: boolean;
  format?: string;
  keepSplits?: string;
  freshSplits?: boolean;
}

function shared(cmd: Command): Command {
  return cmd
    .option('--out <dir>', 'dataset folder (overrides the recipe\'s output)')
    .option('--cache <dir>', 'cache folder (default: .swatchbook-cache beside the recipe)')
    .option('--concurrency <n>', 'requests in flight in all (overrides network.concurrency)')
    .option('--offline', 'use the cache only; never contact a server')
    .option('--frozen', 'allow only requests in the lock file, and only bodies with the locked hashes')
    .option('--format <layout>', 'folder (class folders, the default) or tar (also WebDataset-style tar shards; the recipe\'s shards.patchesPerShard sets their size)')
    .option('--keep-splits <index.jsonl>', 'keep every group of a previous dataset\'s index in the split it had (build, run)')
    .option('--fresh-splits', 'assign splits afresh instead of starting from the last build\'s (in the lock) (build, run)')
    .option('--strict', 'treat a problem in a document from someone else\'s server (a bad annotation, an unreadable document, a collection cycle, a refused address) as fatal (exit 2) instead of a failure record')
    .option('--json', 'print a machine-readable summary on stdout')
    .option('--quiet', 'print nothing but errors')
    .option('--debug', 'show stack traces of unexpected errors');
}

function positiveInt(raw: string, flag: string): number {
  const n = Number(raw);
  if (!Number.isInteger(n) || n < 1) throw new UsageError(`${flag} must be a positive integer, got ${JSON.stringify(raw)}`);
  return n;
}

function nonNegativeInt(raw: string, flag: string): number {
  const n = Number(raw);
  if (!/^\d+$/.test(raw.trim()) || !Number.isInteger(n)) throw new UsageError(`${flag} must be a shard number (0, 1, …), got ${JSON.stringify(raw)}`);
  return n;
}

function modeOf(o: Shared): FetchMode {
  if (o.offline && o.frozen) throw new UsageError('--offline and --frozen cannot be combined');
  return o.frozen ? 'frozen' : o.offline ? 'offline' : 'online';
}

async function recipeWith(path: string, o: Shared): Promise<Recipe> {
  const { loadRecipe } = await import('../recipe/load.ts');
  let r = await loadRecipe(path);
  if (o.format !== undefined && o.format !== 'folder' && o.format !== 'tar') throw new UsageError(`--format must be folder or tar, got ${JSON.stringify(o.format)}`);
  if (o.format === 'tar' && !r.shards) r = { ...r, shards: { patchesPerShard: 1000 } };
  if (o.format === 'folder' && r.shards) {
    const { shards: _shards, ...rest } = r;
    r = rest;
  }
  return o.out ? { ...r, output: resolve(o.out) } : r;
}

function runOptions(o: Shared, rep: Reporter, mode?: FetchMode): RunOptions {
  let concurrency: number | undefined;
  if (o.concurrency !== undefined) {
    concurrency = Number(o.concurrency);
    if (!Number.isInteger(concurrency) || concurrency < 1 || concurrency > 64) throw new UsageError(`--concurrency must be a whole number from 1 to 64, got ${JSON.stringify(o.concurrency)}`);
  }
  return {
    ...(o.cache ? { cacheDir: resolve(o.cache) } : {}),
    mode: mode ?? modeOf(o),
    ...(concurrency ? { concurrency } : {}),
    ...(o.strict ? { strict: true } : {}),
    ...(o.keepSplits ? { keepSplits: resolve(o.keepSplits) } : {}),
    ...(o.freshSplits ? { freshSplits: true } : {}),
    warn: (m) => rep.warn(m),
    onProgress: (stage, done, total) => rep.progress(stage, done, total),
  };
}

/** Runs the command line; returns the exit code (0 all served, 1 failures recorded, 2 bad input or usage). */
export async function main(argv: string[], io: { stdout?: NodeJS.WriteStream; stderr?: NodeJS.WriteStream } = {}): Promise<number> {
  const stdout = io.stdout ?? process.stdout;
  const stderr = io.stderr ?? process.stderr;
  let exitCode = 0;
  let debug = argv.includes('--debug');
  const print = (o: Shared, human: string, machine: unknown) => {
    if (o.json) stdout.write(`${JSON.stringify(machine, null, 2)}\n`);
    else if (!o.quiet) stdout.write(`${human}\n`);
  };

  const program = new Command('swatchbook')
    .description('IIIF images and region annotations → fixed-scale texture-patch datasets')
    .version(VERSION)
    .exitOverride()
    .configureOutput({ writeOut: (s) => stdout.write(s), writeErr: (s) => stderr.write(s) })
    .showHelpAfterError('(run swatchbook --help for the commands)');

  program.command('init [dir]').description('write a starter recipe, and RECIPE.md explaining every field')
    .option('--force', 'overwrite an existing recipe.json')
    .action(async (dir: string | undefined, o: { force?: boolean }) => {
      const folder = resolve(dir ?? '.');
      await mkdir(folder, { recursive: true });
      const file = join(folder, 'recipe.json');
      if (!o.force && (await access(file).then(() => true, () => false))) throw new UsageError(`${file} exists; use --force to overwrite it`);
      const { networkDefaults } = await import('../recipe/schema.ts');
      const starter = {
        name: 'my-materials',
        description: 'What this dataset is for, in a sentence or two.',
        seed: 'my-materials-1',
        sources: [{ manifest: 'https://iiif.example.org/manifests/board.json' }],
        labels: { graining: ['faux oak', 'wood graining'], marbling: ['faux marble', 'marbling'] },
        scale: { pixelsPerMm: 4 },
        patch: { size: 128, stride: 128, minCoverage: 0.9 },
        negatives: { ratio: 1, margin: 16, label: 'background' },
        split: { fractions: { train: 0.8, val: 0.1, test: 0.1 }, groupBy: 'canvas' },
        dedupe: { maxDistance: 4 },
        request: { format: 'png' },
        network: { contact: 'mailto:you@example.org', ...networkDefaults() },
      };
      await writeFile(file, `${JSON.stringify(starter, null, 2)}\n`);
      const { recipeReferenceMarkdown } = await import('../recipe/schema-doc.ts');
      await writeFile(join(folder, 'RECIPE.md'), `# Recipe fields\n\nEvery field of recipe.json, from the schema swatchbook validates against.\n\n${recipeReferenceMarkdown()}\n`);
      stdout.write(`wrote ${file} and ${join(folder, 'RECIPE.md')}; edit the sources and labels, then run: swatchbook plan ${file}\n`);
    });

  shared(program.command('plan <recipe>').description('resolve sources and print what would be fetched, without fetching images; --shards N also writes the plan and its partition for sharded harvests'))
    .option('--shards <n>', 'partition the crops into N shards by image server host (with --out-plan)')
    .option('--out-plan <dir>', 'plan folder for --shards (default: <name>-plan beside the recipe)')
    .action(async (path: string, o: Shared & { shards?: string; outPlan?: string }) => {
      const rep = new Reporter({ quiet: !!o.quiet, json: !!o.json, stream: stderr as NodeJS.WriteStream });
      const recipe = await recipeWith(path, o);
      if (o.shards !== undefined) {
        const n = positiveInt(o.shards, '--shards');
        const dir = o.outPlan ? resolve(o.outPlan) : join(dirname(recipe.file), `${recipe.name}-plan`);
        const { planShards, PLAN_FILE } = await import('../shard/shard-run.ts');
        const folder = await planShards(recipe, n, dir, runOptions(o, rep));
        print(o, [
          `plan: ${join(dir, PLAN_FILE)} (${folder.crops} crops, ${folder.patches} patches planned)`,
          ...folder.shards.map((x) => `  shard ${x.index}: ${x.crops} crops, about ${x.estimatedRequests} requests, hosts ${x.hosts.join(', ') || '(none)'}`),
          `next: swatchbook harvest --plan ${dir} --shard K (K = 0…${n - 1}), then swatchbook merge --plan ${dir}`,
        ].join('\n'), { plan: join(dir, PLAN_FILE), shards: folder.shards, failures: folder.sources.failures });
        if (folder.sources.failures.length) exitCode = 1;
        return;
      }
      const { planRecipe } = await pipeline();
      const { plan, sources } = await planRecipe(recipe, runOptions(o, rep));
      const perClass: Record<string, number> = {};
      for (const r of plan.regions) perClass[r.label] = (perClass[r.label] ?? 0) + 1;
      const patchesPerClass: Record<string, number> = {};
      for (const p of plan.patches) patchesPerClass[p.label] = (patchesPerClass[p.label] ?? 0) + 1;
      const urls = new Set(plan.crops.flatMap((c) => c.stitch.pieces.map((p) => p.url)));
      const pixels = [...new Map(plan.crops.flatMap((c) => c.stitch.pieces.map((p) => [p.url, p.expectWidth * p.expectHeight] as const))).values()].reduce((a, b) => a + b, 0);
      // Estimate: 3 bytes per pixel compressed about 2:1 for PNG and 10:1 for JPEG (common practice).
      const estimatedBytes = Math.round(pixels * 3 * (recipe.request.format === 'png' ? 0.5 : 0.1));
      const servers = sources.services;
      const skipped: Record<string, number> = {};
      for (const s of plan.skipped) skipped[s.reason] = (skipped[s.reason] ?? 0) + 1;
      const summary = { manifests: sources.manifests, regionsPerClass: perClass, patchesPerClass, crops: plan.crops.length, requests: urls.size, estimatedBytes, servers, skipped, negatives: plan.negatives, failures: sources.failures };
      const human = [
        `${sources.manifests} manifest(s), ${plan.regions.length} region(s): ${Object.entries(perClass).map(([k, v]) => `${k} ${v}`).join(', ') || 'none'}`,
        `patches planned: ${Object.entries(patchesPerClass).map(([k, v]) => `${k} ${v}`).join(', ') || 'none'}`,
        `${plan.crops.length} crop(s) from ${urls.size} image request(s), about ${(estimatedBytes / 1e6).toFixed(1)} MB`,
        ...servers.map((s) => `  ${redactUrl(s.id)}  Image API ${s.version} level ${s.level}  ${s.width}×${s.height}`),
        ...(Object.keys(skipped).length ? [`skipped regions: ${Object.entries(skipped).map(([k, v]) => `${k} ${v}`).join(', ')}`] : []),
        ...(sources.failures.length ? [`${sources.failures.length} source(s) could not be read: ${sources.failures.map((f) => `${f.url ?? f.key} (${f.reason})`).join('; ')}`] : []),
      ].join('\n');
      print(o, human, summary);
      if (sources.failures.length) exitCode = 1;
    });

  shared(program.command('harvest [recipe]').description('fetch every crop into the cache and write the lock file; with --plan, one shard of a sharded plan into its own cache'))
    .option('--plan <dir>', 'plan folder written by plan --shards')
    .option('--shard <k>', 'which shard (default: SLURM_ARRAY_TASK_ID, or JOB_COMPLETION_INDEX of a Kubernetes Indexed Job)')
    .action(async (path: string | undefined, o: Shared & { plan?: string; shard?: string }) => {
      const rep = new Reporter({ quiet: !!o.quiet, json: !!o.json, stream: stderr as NodeJS.WriteStream });
      if (o.plan) {
        const raw = o.shard ?? process.env.SLURM_ARRAY_TASK_ID ?? process.env.JOB_COMPLETION_INDEX;
        if (raw === undefined) throw new UsageError('harvest --plan needs --shard K (or SLURM_ARRAY_TASK_ID / JOB_COMPLETION_INDEX in the environment)');
        const k = nonNegativeInt(raw, '--shard');
        const { harvestShard } = await import('../shard/shard-run.ts');
        const r = await harvestShard(resolve(o.plan), k, runOptions(o, rep));
        const s = r.summary;
        print(o, `shard ${k}: ${s.served} of ${s.crops} crops served (${s.fromCache} pieces from the cache, ${s.requests} requests, ${s.retries} retries), ${r.failures.length} failure(s)`, { shard: k, ...s, failures: r.failures });
        if (r.failures.length) exitCode = 1;
        return;
      }
      if (!path) throw new UsageError('harvest needs a recipe, or --plan DIR for one shard');
      const recipe = await recipeWith(path, o);
      const { harvestRecipe } = await pipeline();
      const { harvest, sources } = await harvestRecipe(recipe, runOptions(o, rep));
      const s = harvest.summary;
      const failures = [...sources.failures, ...harvest.failures];
      print(o, `harvest: ${s.served} of ${s.crops} crops served (${s.fromCache} pieces from the cache, ${s.requests} requests, ${s.retries} retries, ${(s.bytes / 1e6).toFixed(2)} MB), ${failures.length} failure(s)`, { ...s, failures });
      for (const f of failures) rep.warn(`${f.stage} ${f.url ?? f.key}: ${f.reason}`);
      if (failures.length) exitCode = 1;
    });

  /** Runs the probe after a build; a probe that fails is a warning, never a failed build. */
  const probeAfterBuild = async (dataset: string, rep: Reporter): Promise<{ file: string; separable: boolean; flagged: number } | { error: string }> => {
    try {
      const [{ runProbe }, { probeHeadline }] = await Promise.all([import('../run-probe.ts'), import('../probe/probe.ts')]);
      const { report, file } = await runProbe(dataset, undefined, (d, t) => rep.progress('describe', d, t));
      const { separable, flagged } = probeHeadline(report);
      return { file, separable, flagged };
    } catch (err) {
      const message = redactUrl((err as Error).message ?? String(err));
      rep.warn(`probe: ${message}`);
      return { error: message };
    }
  };
  /** Writes the visual report after a build (and its probe); a report that fails is a warning, never a failed build. */
  const reportAfterBuild = async (dataset: string, cacheDir: string, rep: Reporter): Promise<{ file: string; tiles: number; footprints: number } | { error: string }> => {
    try {
      const { writeReport } = await import('../report/write-report.ts');
      const r = await writeReport(dataset, { cacheDir });
      return { file: r.file, tiles: r.tiles, footprints: r.footprints };
    } catch (err) {
      const message = redactUrl((err as Error).message ?? String(err));
      rep.warn(`report: ${message}`);
      return { error: message };
    }
  };
  const reportLine = (r: Awaited<ReturnType<typeof reportAfterBuild>>) => ('error' in r ? `report: not written (${r.error})` : `report:    ${r.file}`);
  const probeLine = (p: Awaited<ReturnType<typeof probeAfterBuild>>) =>
    'error' in p ? `probe: not written (${p.error})` : `probe: ${p.separable ? 'classes separate above the random baseline' : 'classes do not separate above the random baseline'}; ${p.flagged} test patch(es) flagged for leakage; ${p.file}`;

  const buildLike = (name: string, description: string, defaultMode: FetchMode | undefined) =>
    shared(program.command(`${name} <recipe>`).description(description))
      .option('--no-probe', 'do not run the probe after the build')
      .option('--no-report', 'do not write the visual report after the build')
      .action(async (path: string, o: Shared & { probe?: boolean; report?: boolean }) => {
      const rep = new Reporter({ quiet: !!o.quiet, json: !!o.json, stream: stderr as NodeJS.WriteStream });
      const recipe = await recipeWith(path, o);
      const mode = o.frozen || o.offline ? modeOf(o) : (defaultMode ?? 'online');
      const { runRecipe } = await pipeline();
      const { build } = await runRecipe(recipe, runOptions(o, rep, mode));
      const probed = o.probe === false ? undefined : await probeAfterBuild(build.out, rep);
      const { defaultCacheDir } = await pipeline();
      const reported = o.report === false ? undefined : await reportAfterBuild(build.out, o.cache ? resolve(o.cache) : defaultCacheDir(recipe), rep);
      print(o, [
        `${rep.bold(`${build.patches} patches`)} (train ${build.perSplit.train}, val ${build.perSplit.val}, test ${build.perSplit.test}) from ${build.crops} crops; ${build.nearDuplicatePairs} near-duplicate pair(s)`,
        `fetch: ${build.harvest.requests} request(s), ${build.harvest.fromCache} from the cache, ${build.harvest.retries} retries`,
        `dataset: ${build.out}  (card.md, index.jsonl, splits/, lock.json)`,
        build.failures ? `${build.failures} failure(s): see ${join(build.out, 'failures.jsonl')}` : 'no failures',
        ...(probed ? [probeLine(probed)] : []),
        ...(reported ? [reportLine(reported)] : []),
      ].join('\n'), { ...build, ...(probed ? { probe: probed } : {}), ...(reported ? { report: reported } : {}) });
      if (build.failures) exitCode = 1;
    });
  buildLike('build', 'cut patches from the cache and write the dataset (never contacts a server)', 'offline');
  buildLike('run', 'plan, harvest and build in one go', undefined);

  shared(program.command('merge [caches...]').description('merge the shards of a plan folder: union their caches (hashes verified), then build the dataset as run would'))
    .requiredOption('--plan <dir>', 'plan folder written by plan --shards')
    .option('--no-probe', 'do not run the probe after the build')
    .option('--no-report', 'do not write the visual report after the build')
    .action(async (caches: string[], o: Shared & { plan: string; probe?: boolean; report?: boolean }) => {
      const rep = new Reporter({ quiet: !!o.quiet, json: !!o.json, stream: stderr as NodeJS.WriteStream });
      const { mergeShards } = await import('../shard/shard-run.ts');
      const build = await mergeShards(resolve(o.plan), caches.map((c) => resolve(c)), { ...runOptions(o, rep), ...(o.out ? { out: resolve(o.out) } : {}) });
      const probed = o.probe === false ? undefined : await probeAfterBuild(build.out, rep);
      const reported = o.report === false ? undefined : await reportAfterBuild(build.out, build.cacheDir, rep);
      print(o, [
        `${rep.bold(`${build.patches} patches`)} (train ${build.perSplit.train}, val ${build.perSplit.val}, test ${build.perSplit.test}) from ${build.crops} crops, merged from the shards`,
        `dataset: ${build.out}`,
        build.failures ? `${build.failures} failure(s): see ${join(build.out, 'failures.jsonl')}` : 'no failures',
        ...(probed ? [probeLine(probed)] : []),
        ...(reported ? [reportLine(reported)] : []),
      ].join('\n'), { ...build, ...(probed ? { probe: probed } : {}), ...(reported ? { report: reported } : {}) });
      if (build.failures) exitCode = 1;
    });

  shared(program.command('slurm <recipe>').description('plan N shards and write (with --submit, submit) a Slurm job array that harvests them and a merge job that depends on it'))
    .requiredOption('--shards <n>', 'number of shards (array tasks)')
    .option('--out-plan <dir>', 'plan folder (default: <name>-plan beside the recipe)')
    .option('--partition <p>', 'Slurm partition')
    .option('--time <t>', 'time limit per job (Slurm syntax, e.g. 02:00:00)')
    .option('--submit', 'submit with sbatch and print the job ids')
    .action(async (path: string, o: Shared & { shards: string; outPlan?: string; partition?: string; time?: string; submit?: boolean }) => {
      const rep = new Reporter({ quiet: !!o.quiet, json: !!o.json, stream: stderr as NodeJS.WriteStream });
      const recipe = await recipeWith(path, o);
      const n = positiveInt(o.shards, '--shards');
      const dir = o.outPlan ? resolve(o.outPlan) : join(dirname(recipe.file), `${recipe.name}-plan`);
      const [{ planShards, PLAN_FILE }, { harvestArrayScript, mergeScript, shellQuote }, { writeFile: write }, { execFileSync }] = await Promise.all([
        import('../shard/shard-run.ts'), import('../shard/slurm-script.ts'), import('node:fs/promises'), import('node:child_process'),
      ]);
      const folder = await planShards(recipe, n, dir, runOptions(o, rep));
      const bin = resolve(new URL('../../bin/swatchbook.js', import.meta.url).pathname);
      const script = { command: `${shellQuote(process.execPath)} ${shellQuote(bin)}`, planDir: dir, shards: n, jobName: recipe.name, out: recipe.output, ...(o.partition ? { partition: o.partition } : {}), ...(o.time ? { time: o.time } : {}) };
      const harvestFile = join(dir, 'harvest.sbatch'), mergeFile = join(dir, 'merge.sbatch');
      await write(harvestFile, harvestArrayScript(script), { mode: 0o755 });
      await write(mergeFile, mergeScript(script), { mode: 0o755 });
      let jobs: { harvest: string; merge: string } | undefined;
      if (o.submit) {
        const harvestJob = execFileSync('sbatch', ['--parsable', harvestFile], { encoding: 'utf8' }).trim().split(';')[0]!;
        const mergeJob = execFileSync('sbatch', ['--parsable', `--dependency=afterok:${harvestJob}`, mergeFile], { encoding: 'utf8' }).trim().split(';')[0]!;
        jobs = { harvest: harvestJob, merge: mergeJob };
      }
      print(o, [
        `plan: ${join(dir, PLAN_FILE)}, ${n} shard(s) by host: ${folder.shards.map((x) => `${x.index}: ${x.hosts.join(', ') || '(none)'} (${x.crops} crops)`).join('; ')}`,
        `job array: ${harvestFile}`,
        `merge job: ${mergeFile}`,
        jobs ? `submitted: harvest array ${jobs.harvest}, merge ${jobs.merge} (after the array succeeds)` : `submit: sbatch ${harvestFile}, then sbatch --dependency=afterok:<array id> ${mergeFile}`,
      ].join('\n'), { plan: join(dir, PLAN_FILE), harvestScript: harvestFile, mergeScript: mergeFile, ...(jobs ? { jobs } : {}) });
      if (folder.sources.failures.length) exitCode = 1;
    });

  shared(program.command('verify <recipe>').description('rebuild from the cache and compare every file with the dataset; --refetch reports drift at the sources'))
    .option('--refetch', 'ask the servers again (politely) and report which sources changed; never overwrites the dataset')
    .action(async (path: string, o: Shared & { refetch?: boolean }) => {
      const rep = new Reporter({ quiet: !!o.quiet, json: !!o.json, stream: stderr as NodeJS.WriteStream });
      const recipe = await recipeWith(path, o);
      const { refetchDrift, verifyRecipe } = await pipeline();
      if (o.refetch) {
        const drift = await refetchDrift(recipe, runOptions(o, rep, 'refresh'));
        print(o, [
          `checked ${drift.checked} locked request(s): ${drift.changed.length} changed, ${drift.unreachable.length} unreachable`,
          ...drift.changed.map((c) => `  changed ${c.kind}: ${c.url}`),
          ...drift.unreachable.map((u) => `  unreachable: ${u.url} (${u.reason})`),
        ].join('\n'), drift);
        if (drift.changed.length || drift.unreachable.length) exitCode = 1;
        return;
      }
      const report = await verifyRecipe(recipe, runOptions(o, rep, 'offline'));
      print(o, report.identical ? `identical: all ${report.files} files match` : [`${report.differing.length} file(s) differ:`, ...report.differing.map((d) => `  ${d.file}`)].join('\n'), report);
      if (!report.identical) exitCode = 1;
    });

  program.command('trace <patchId>').description('print the chain of provenance of one patch')
    .option('--dataset <dir>', 'dataset folder', '.')
    .option('--json', 'print the chain as JSON')
    .action(async (id: string, o: { dataset: string; json?: boolean }) => {
      const { tracePatch, renderTrace } = await import('../dataset/trace.ts');
      const { chain } = await tracePatch(resolve(o.dataset), id);
      stdout.write(o.json ? `${JSON.stringify(chain, null, 2)}\n` : `${renderTrace(chain)}\n`);
    });

  program.command('probe <dataset>').description('texture descriptors and retrieval scores: can the classes be told apart, and does test leak from train? Writes probe.json beside the dataset')
    .option('--out <dir>', 'folder for probe.json (default: <dataset>-probe beside the dataset)')
    .option('--queries <dir>', 'outside images in class subfolders (at the dataset\'s scale), cut into patches that query the training patches')
    .option('--json', 'print the report as JSON')
    .option('--quiet', 'print nothing but errors')
    .action(async (dataset: string, o: { out?: string; queries?: string; json?: boolean; quiet?: boolean }) => {
      const rep = new Reporter({ quiet: !!o.quiet, json: !!o.json, stream: stderr as NodeJS.WriteStream });
      const [{ runProbe }, { probeHeadline }] = await Promise.all([import('../run-probe.ts'), import('../probe/probe.ts')]);
      const { report, file } = await runProbe(resolve(dataset), o.out ? resolve(o.out) : undefined, (d, t) => rep.progress('describe', d, t), o.queries ? { queries: resolve(o.queries) } : {});
      const { all, separable } = probeHeadline(report);
      const q = report.queries;
      print(o, [
        `${report.patches.train} training and ${report.patches.test} test patches, ${report.patches.classes.length} classes${report.gallery.exact ? '' : ` (gallery sampled: ${report.gallery.size} of ${report.gallery.sampledFrom})`}`,
        ...report.retrieval.filter((r) => r.direction === 'test→train').map((r) => `  ${r.descriptor.padEnd(6)} ${r.distance.padEnd(9)} P@1 ${r.overall.p1.toFixed(3)}  P@10 ${r.overall.p10.toFixed(3)}  mAP ${r.overall.map.toFixed(3)}`),
        `  baselines: random P@1 ${report.baselines.random.p1.toFixed(3)}, majority class (${report.baselines.majority.class}) P@1 ${report.baselines.majority.p1.toFixed(3)}`,
        all ? `separable: ${separable ? 'above' : 'not above'} the random baseline` : 'no test patches to query with',
        `leakage: ${report.leakage.flagged.length} test patch(es) flagged${report.leakage.flagged.length ? `: ${report.leakage.flagged.slice(0, 5).map((f) => `${f.test}~${f.train}`).join(', ')}` : ''}`,
        ...(q ? [`queries (${q.folder}): ${q.patches} patches from ${q.images} images query training: P@1 ${q.overall.p1.toFixed(3)}  P@10 ${q.overall.p10.toFixed(3)}  mAP ${q.overall.map.toFixed(3)} (random ${q.randomBaseline.toFixed(3)})${q.unknownClasses.length ? `; classes not in the dataset: ${q.unknownClasses.join(', ')}` : ''}`] : []),
        `report: ${file}`,
      ].join('\n'), report);
    });

  program.command('report <dataset>').description('write the visual report of a dataset (contact sheets, canvas maps, balance charts, near-duplicates, skips and failures) beside it')
    .option('--out <dir>', 'folder of the report (default: <dataset>-report beside the dataset)')
    .option('--cache <dir>', 'cache holding the canvas thumbnails (default: .swatchbook-cache beside the dataset)')
    .option('--json', 'print a machine-readable summary on stdout')
    .option('--quiet', 'print nothing but errors')
    .action(async (dataset: string, o: { out?: string; cache?: string; json?: boolean; quiet?: boolean }) => {
      const { writeReport } = await import('../report/write-report.ts');
      const r = await writeReport(resolve(dataset), { ...(o.out ? { outDir: resolve(o.out) } : {}), ...(o.cache ? { cacheDir: resolve(o.cache) } : {}) });
      print(o, `report: ${r.file} (${r.tiles} tiles, ${r.maps} canvas maps with ${r.footprints} patch outlines, ${r.thumbnails} thumbnails)`, r);
    });

  program.command('demo').description('paint the invented sample boards, serve them on 127.0.0.1, and run the whole job')
    .option('--out <dir>', 'demo folder', 'swatchbook-demo')
    .addOption(new Option('--port <n>', 'port of the embedded image server on 127.0.0.1').default(String(DEFAULT_DEMO_PORT)))
    .option('--json', 'print a machine-readable summary on stdout')
    .option('--quiet', 'print nothing but errors')
    .action(async (o: { out: string; port: string; json?: boolean; quiet?: boolean }) => {
      const rep = new Reporter({ quiet: !!o.quiet, json: !!o.json, stream: stderr as NodeJS.WriteStream });
      const port = Number(o.port);
      if (!Number.isInteger(port) || port < 0 || port > 65535) throw new UsageError(`--port must be a port number, got ${JSON.stringify(o.port)}`);
      const { runDemo } = await import('../demo/run-demo.ts');
      const result = await runDemo(o.out, port, { onStage: (s) => rep.note(s), warn: (m) => rep.warn(m), onProgress: (stage, d, t) => rep.progress(stage, d, t) });
      const b = result.build;
      const probed = await probeAfterBuild(result.dataset, rep);
      const reported = await reportAfterBuild(result.dataset, join(dirname(result.recipeFile), '.swatchbook-cache'), rep);
      print(o, [
        rep.bold(`demo done: ${b.patches} patches (train ${b.perSplit.train}, val ${b.perSplit.val}, test ${b.perSplit.test})`),
        `dataset:   ${result.dataset}`,
        `card:      ${join(result.dataset, 'card.md')}`,
        `index:     ${join(result.dataset, 'index.jsonl')}`,
        `failures:  ${join(result.dataset, 'failures.jsonl')} (${b.failures})`,
        probeLine(probed),
        reportLine(reported),
        `recipe:    ${result.recipeFile}`,
        `try:       swatchbook trace <id from index.jsonl> --dataset ${result.dataset}`,
      ].join('\n'), { ...result, probe: probed, report: reported });
      if (b.failures) exitCode = 1;
    });

  try {
    await program.parseAsync(['node', 'swatchbook', ...argv]);
    return exitCode;
  } catch (err) {
    if (err instanceof CommanderError) {
      if (err.code === 'commander.helpDisplayed' || err.code === 'commander.version' || err.code === 'commander.help') return 0;
      return 2;
    }
    if (err instanceof SwatchbookError) {
      stderr.write(`swatchbook: ${err.message}\n`);
      if (debug && err.stack) stderr.write(`${err.stack}\n`);
      return err.exitCode;
    }
    stderr.write(`swatchbook: internal error: ${redactUrl((err as Error)?.message ?? String(err))}\n`);
    if (debug && (err as Error)?.stack) stderr.write(`${(err as Error).stack}\n`);
    else stderr.write('(run again with --debug for details)\n');
    return 1;
  }
}
