import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../src/cli/main.ts';
import { hashTree } from '../../src/pipeline.ts';
import { slurmAvailable } from '../servers/availability.ts';
import { startLocalSlurm, waitForJobs } from './local-slurm.ts';
import { twoArchives } from './two-archives.ts';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'swatchbook-slurm-run-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});
const quiet = { stdout: { write: () => true } as unknown as NodeJS.WriteStream, stderr: { write: () => true } as unknown as NodeJS.WriteStream };

describe.runIf(slurmAvailable())('on a real Slurm (single node on 127.0.0.1)', () => {
  it('swatchbook slurm --submit: a 2-task harvest array and a dependent merge give the single-machine dataset, byte for byte', async () => {
    const { recipe, close } = await twoArchives(join(dir, 'w'));
    const slurm = await startLocalSlurm();
    const saved = process.env.SLURM_CONF;
    try {
      expect(await main(['run', recipe.file, '--out', join(dir, 'single'), '--no-probe', '--no-report', '--quiet'], quiet)).toBe(0);
      process.env.SLURM_CONF = slurm.conf; // sbatch, run by the command, finds the cluster here
      let out = '';
      const io = { ...quiet, stdout: { write: (s: string) => ((out += s), true) } as unknown as NodeJS.WriteStream };
      expect(await main(['slurm', recipe.file, '--shards', '2', '--out', join(dir, 'merged'), '--out-plan', join(dir, 'plan'), '--submit', '--json'], io)).toBe(0);
      const summary = JSON.parse(out);
      expect(summary.jobs.harvest).toMatch(/^\d+$/);
      expect(summary.jobs.merge).toMatch(/^\d+$/);
      const script = await readFile(summary.harvestScript, 'utf8');
      expect(script).toContain('#SBATCH --array=0-1');
      const states = await waitForJobs(slurm.env, [summary.jobs.harvest, summary.jobs.merge]);
      // two array tasks and the merge, each COMPLETED with exit code 0
      expect(states.filter((l) => /JobState=COMPLETED .*ExitCode=0:0/.test(l)).length, states.join('\n')).toBe(3);
      const a = await hashTree(join(dir, 'single')), b = await hashTree(join(dir, 'merged'));
      expect(a.size).toBeGreaterThan(100);
      expect([...b.entries()]).toEqual([...a.entries()]);
    } finally {
      if (saved === undefined) delete process.env.SLURM_CONF;
      else process.env.SLURM_CONF = saved;
      await slurm.stop();
      await close();
    }
  }, 300_000);
});
