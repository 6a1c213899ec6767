/**
 * Wall time of a 4-shard run against one machine, on the same scenario: the
 * demo boards served by four image servers on 127.0.0.1 (four hosts), one
 * recipe over all four. One machine: `swatchbook run`. Sharded: `plan --shards 4`,
 * the four `harvest --shard K` processes at once, then `merge`. Every step is a
 * process of the compiled command; both datasets are compared byte for byte.
 * Prints JSON. Not a test.   tsx bench/shards.ts
 */
import { execFile } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { performance } from 'node:perf_hooks';
import { promisify } from 'node:util';
import { demoDocuments } from '../src/demo/documents.ts';
import { startDemoServer } from '../src/demo/server.ts';
import { writeDemoSite } from '../src/demo/site.ts';
import { hashTree } from '../src/pipeline.ts';

const run = promisify(execFile);
const BIN = resolve(import.meta.dirname, '../bin/swatchbook.js');
const sw = (...args: string[]) => run(process.execPath, [BIN, ...args, '--quiet'], { maxBuffer: 1 << 26 });
const dir = await mkdtemp(join(tmpdir(), 'swatchbook-bench-shards-'));
const site = join(dir, 'site');
const boards = await writeDemoSite(site);
const servers = [];
for (let i = 0; i < 4; i++) {
  const documents = new Map<string, unknown>();
  const s = await startDemoServer(site, documents, 0);
  for (const [p, d] of demoDocuments(s.base, boards)) documents.set(p, d);
  servers.push(s);
}
const recipe = {
  name: 'four-hosts', seed: 'four-hosts-1',
  sources: servers.map((s) => ({ collection: `${s.base}/collection.json` })),
  labels: { graining: ['faux oak', 'wood graining'], marbling: ['faux marble', 'marbling'], gilding: ['gold leaf', 'gilding'] },
  scale: { pixelsPerMm: 2 }, patch: { size: 48, stride: 48, minCoverage: 0.9 }, negatives: { ratio: 1, margin: 8 },
  split: { fractions: { train: 0.7, val: 0.15, test: 0.15 } }, request: { format: 'png' },
  network: { contact: 'mailto:bench@example.org', concurrency: 4, perHost: 2, perHostRate: 200, retries: 1 },
  output: 'dataset',
};
const file = join(dir, 'recipe.json');
await writeFile(file, JSON.stringify(recipe));
let t = performance.now();
await sw('run', file, '--out', join(dir, 'single'), '--cache', join(dir, 'single-cache'), '--no-probe', '--no-report');
const single = performance.now() - t;
t = performance.now();
await sw('plan', file, '--shards', '4', '--out-plan', join(dir, 'plan'), '--cache', join(dir, 'sharded-cache'));
const planned = performance.now() - t;
await Promise.all([0, 1, 2, 3].map((k) => sw('harvest', '--plan', join(dir, 'plan'), '--shard', String(k))));
const harvested = performance.now() - t;
await sw('merge', '--plan', join(dir, 'plan'), '--out', join(dir, 'merged'), '--cache', join(dir, 'sharded-cache'), '--no-probe', '--no-report');
const sharded = performance.now() - t;
const a = await hashTree(join(dir, 'single')), b = await hashTree(join(dir, 'merged'));
const identical = a.size === b.size && [...a].every(([k, v]) => b.get(k) === v);
for (const s of servers) await s.close();
await rm(dir, { recursive: true, force: true });
console.log(JSON.stringify({ hosts: 4, files: a.size, singleMs: Math.round(single), shardedMs: Math.round(sharded), planMs: Math.round(planned), harvestDoneMs: Math.round(harvested), ratio: +(sharded / single).toFixed(2), identical }));
