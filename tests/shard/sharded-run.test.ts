import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { spawn } from 'node:child_process';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { main } from '../../src/cli/main.ts';
import { hashTree, planRecipe } from '../../src/pipeline.ts';
import { harvestShard, planFolderLines, planShards, readPlanFolder } from '../../src/shard/shard-run.ts';
import { twoArchives } from './two-archives.ts';
import { partitionByHost } from '../../src/shard/partition.ts';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'swatchbook-shards-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

const quiet = { stdout: { write: () => true } as unknown as NodeJS.WriteStream, stderr: { write: () => true } as unknown as NodeJS.WriteStream };
function capture() {
  let out = '', err = '';
  return { io: { stdout: { write: (s: string) => ((out += s), true) } as unknown as NodeJS.WriteStream, stderr: { write: (s: string) => ((err += s), true) } as unknown as NodeJS.WriteStream }, out: () => out, err: () => err };
}
const BIN = resolve(import.meta.dirname, '../../bin/swatchbook.js');
async function countObjects(cache: string): Promise<number> {
  let n = 0;
  for (const d of await readdir(join(cache, 'objects')).catch(() => [] as string[])) n += (await readdir(join(cache, 'objects', d)).catch(() => [] as string[])).length;
  return n;
}

describe('sharded harvest and merge', () => {
  it('plan --shards splits by host; shards harvest alone (a killed one resumes from its cache); the merge equals a single run byte for byte', async () => {
    const { recipe, hosts, close } = await twoArchives(join(dir, 'w'));
    try {
      // one machine
      expect(await main(['run', recipe.file, '--out', join(dir, 'single'), '--no-probe', '--no-report', '--quiet'], quiet)).toBe(0);
      // plan once, two shards: one host each
      const plan = join(dir, 'plan');
      const p = capture();
      expect(await main(['plan', recipe.file, '--shards', '2', '--out-plan', plan, '--json'], p.io)).toBe(0);
      const planned = JSON.parse(p.out());
      expect(planned.shards.map((s: { hosts: string[] }) => s.hosts).flat().sort()).toEqual(hosts);
      expect(planned.shards.every((s: { hosts: string[]; crops: number }) => s.hosts.length === 1 && s.crops > 0)).toBe(true);
      // The plan went to disk through a sorting writer: it is the plan planned in memory, line for line,
      // also when the writer's runs are tiny (dozens of sorted runs merged).
      const inMemory = (await planRecipe(recipe, { mode: 'offline' })).plan;
      const written = await readFile(join(plan, 'plan.jsonl'), 'utf8');
      const folder = await readPlanFolder(plan);
      expect(folder.plan).toEqual(JSON.parse(JSON.stringify(inMemory)));
      expect(written).toBe([...planFolderLines({ ...folder, plan: inMemory })].join(''));
      // The hosts' loads counted while merging the sorted lines give the partition of the crops held whole.
      expect(folder.shards).toEqual(partitionByHost(inMemory.crops, 2));
      await planShards(recipe, 2, join(dir, 'plan-small-runs'), { mode: 'offline', sortRunChars: 4096 });
      expect(await readFile(join(dir, 'plan-small-runs', 'plan.jsonl'), 'utf8')).toBe(written);
      // shard 0 in its own process, killed with SIGKILL part-way; then run again: it resumes from its cache
      const cache0 = join(plan, 'shard-0', 'cache');
      const child = spawn(process.execPath, [BIN, 'harvest', '--plan', plan, '--shard', '0', '--quiet'], { stdio: 'ignore' });
      const exited = new Promise<void>((r) => child.on('exit', () => r()));
      for (let i = 0; i < 600 && (await countObjects(cache0)) < 8; i++) await new Promise((r) => setTimeout(r, 25));
      child.kill('SIGKILL');
      await exited;
      const beforeResume = await countObjects(cache0);
      expect(beforeResume).toBeGreaterThan(0);
      const resumed = await harvestShard(plan, 0);
      expect(resumed.failures).toEqual([]);
      expect(resumed.summary.fromCache).toBeGreaterThan(0);
      expect(resumed.summary.requests).toBeLessThan(resumed.summary.uniquePieces);
      // shard 1 through the environment variable a Slurm array task sets
      process.env.SLURM_ARRAY_TASK_ID = '1';
      try {
        expect(await main(['harvest', '--plan', plan, '--quiet'], quiet)).toBe(0);
      } finally {
        delete process.env.SLURM_ARRAY_TASK_ID;
      }
      // merged into a fresh cache: every crop's patches come from the shards' cut results, none is cut again
      const m = capture();
      expect(await main(['merge', '--plan', plan, '--out', join(dir, 'merged'), '--cache', join(dir, 'merge-cache'), '--no-probe', '--no-report', '--json', join(plan, 'shard-0', 'cache'), join(plan, 'shard-1', 'cache')], m.io)).toBe(0);
      const merged = JSON.parse(m.out());
      expect(merged.crops).toBeGreaterThan(100);
      expect(merged.cropsCutFromCache).toBe(merged.crops - merged.cropsFailed);
      const a = await hashTree(join(dir, 'single')), b = await hashTree(join(dir, 'merged'));
      expect(a.size).toBeGreaterThan(100);
      expect([...b.entries()]).toEqual([...a.entries()]);
    } finally {
      await close();
    }
  }, 240_000);

  it('refuses a URL two shards saw with different bytes, naming it, and a shard that has not run', async () => {
    const plan = join(dir, 'plan');
    const r0 = JSON.parse(await readFile(join(plan, 'shard-0', 'result.json'), 'utf8'));
    const r1 = JSON.parse(await readFile(join(plan, 'shard-1', 'result.json'), 'utf8'));
    const url = r0.lockFacts[0].url;
    const forged = { ...r1, lockFacts: [...r1.lockFacts, { ...r0.lockFacts[0], sha256: 'f'.repeat(64) }] };
    await writeFile(join(plan, 'shard-1', 'result.json'), JSON.stringify(forged));
    const c = capture();
    expect(await main(['merge', '--plan', plan, '--out', join(dir, 'never'), '--no-probe', '--no-report'], c.io)).toBe(2);
    expect(c.err()).toContain(url);
    expect(c.err()).toContain('different bytes');
    await rm(join(plan, 'shard-1', 'result.json'));
    const d = capture();
    expect(await main(['merge', '--plan', plan, '--out', join(dir, 'never'), '--no-probe', '--no-report'], d.io)).toBe(2);
    expect(d.err()).toContain('shard 1 has no result');
    await expect(readdir(join(dir, 'never'))).rejects.toThrow();
  }, 60_000);
});
