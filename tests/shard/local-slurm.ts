import { ChildProcess, execFileSync, spawn, spawnSync } from 'node:child_process';
import { chmod, mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { randomBytes } from 'node:crypto';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { freePort } from '../servers/net-util.ts';

/**
 * A single-node Slurm on 127.0.0.1 in a temporary folder, as root, with its own
 * munge key and socket: munged, slurmctld and slurmd in the foreground (their
 * own PIDs, stopped by them). No systemd, nothing installed system-wide changed.
 */
export interface LocalSlurm {
  conf: string;
  env: NodeJS.ProcessEnv;
  stop: () => Promise<void>;
}


const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

export async function startLocalSlurm(): Promise<LocalSlurm> {
  const w = await mkdtemp(join(tmpdir(), 'swatchbook-slurm-'));
  await chmod(w, 0o755);
  for (const d of ['state', 'spool', 'log', 'run']) await mkdir(join(w, d), { recursive: true });
  for (const d of ['etc', 'lib', 'log', 'run']) await mkdir(join(w, 'munge', d), { recursive: true });
  await chmod(join(w, 'munge'), 0o755);
  await chmod(join(w, 'munge', 'run'), 0o755);
  for (const d of ['etc', 'lib', 'log']) await chmod(join(w, 'munge', d), 0o700);
  const key = join(w, 'munge', 'etc', 'munge.key');
  await writeFile(key, randomBytes(1024), { mode: 0o400 });
  const socket = join(w, 'munge', 'run', 'munge.socket');
  const procs: ChildProcess[] = [];
  const start = (cmd: string, args: string[], env: NodeJS.ProcessEnv = process.env) => {
    const p = spawn(cmd, args, { stdio: 'ignore', env });
    procs.push(p);
    return p;
  };
  const stop = async () => {
    for (const p of [...procs].reverse()) {
      if (p.exitCode !== null || p.signalCode !== null) continue;
      const exited = new Promise<void>((r) => p.once('exit', () => r()));
      p.kill('SIGTERM');
      await Promise.race([exited, sleep(15_000).then(() => p.kill('SIGKILL'))]);
    }
    await rm(w, { recursive: true, force: true });
  };
  try {
    start('munged', ['-F', `--key-file=${key}`, `--socket=${socket}`, `--pid-file=${join(w, 'munge', 'run', 'munged.pid')}`, `--seed-file=${join(w, 'munge', 'lib', 'munged.seed')}`, `--log-file=${join(w, 'munge', 'log', 'munged.log')}`]);
    let ok = false;
    for (let i = 0; i < 200 && !ok; i++) {
      const cred = spawnSync('munge', ['-S', socket, '-n'], { encoding: 'utf8' });
      ok = cred.status === 0 && spawnSync('unmunge', ['-S', socket], { input: cred.stdout }).status === 0;
      if (!ok) await sleep(50);
    }
    if (!ok) throw new Error('munged did not answer');
    const ctld = await freePort();
    let slurmd = await freePort();
    if (slurmd === ctld) slurmd = await freePort();
    const hw = execFileSync('slurmd', ['-C'], { encoding: 'utf8' }).split('\n')[0]!.replace(/^NodeName=\S+ /, '').replace(/ UpTime=.*$/, '');
    const conf = join(w, 'slurm.conf');
    await writeFile(conf, [
      'ClusterName=local', 'SlurmctldHost=localhost(127.0.0.1)', `SlurmctldPort=${ctld}`, `SlurmdPort=${slurmd}`,
      'CommunicationParameters=NoCtldInAddrAny,NoInAddrAny', 'SlurmUser=root', 'SlurmdUser=root',
      'AuthType=auth/munge', 'CredType=cred/munge', `AuthInfo=socket=${socket}`,
      `StateSaveLocation=${join(w, 'state')}`, `SlurmdSpoolDir=${join(w, 'spool')}`,
      `SlurmctldPidFile=${join(w, 'run', 'slurmctld.pid')}`, `SlurmdPidFile=${join(w, 'run', 'slurmd.pid')}`,
      `SlurmctldLogFile=${join(w, 'log', 'slurmctld.log')}`, `SlurmdLogFile=${join(w, 'log', 'slurmd.log')}`,
      'ProctrackType=proctrack/linuxproc', 'TaskPlugin=task/none', 'JobAcctGatherType=jobacct_gather/none',
      'AccountingStorageType=accounting_storage/none', 'JobCompType=jobcomp/none', 'MpiDefault=none', 'MailProg=/bin/true',
      'SelectType=select/cons_tres', 'SelectTypeParameters=CR_Core', 'SchedulerType=sched/backfill', 'SchedulerParameters=batch_sched_delay=0',
      'ReturnToService=2', `NodeName=localhost NodeAddr=127.0.0.1 ${hw} State=UNKNOWN`, 'PartitionName=debug Nodes=ALL Default=YES MaxTime=INFINITE State=UP', '',
    ].join('\n'));
    const env = { ...process.env, SLURM_CONF: conf };
    start('slurmctld', ['-D', '-c', '-f', conf], env);
    start('slurmd', ['-D', '-N', 'localhost', '-f', conf], env);
    let idle = false;
    for (let i = 0; i < 300 && !idle; i++) {
      idle = spawnSync('sinfo', ['-h', '-n', 'localhost', '-o', '%T'], { encoding: 'utf8', env, timeout: 3000 }).stdout?.trim() === 'idle';
      if (!idle) await sleep(100);
    }
    if (!idle) throw new Error('the Slurm node did not become idle in 30 s');
    return { conf, env, stop };
  } catch (err) {
    await stop();
    throw err;
  }
}

/** Waits until none of the jobs is in the queue; returns `scontrol show job` lines (one per task). */
export async function waitForJobs(env: NodeJS.ProcessEnv, ids: readonly string[], timeoutMs = 180_000): Promise<string[]> {
  const t0 = Date.now();
  while (Date.now() - t0 < timeoutMs) {
    const q = spawnSync('squeue', ['-h', '-j', ids.join(','), '-o', '%i %r'], { encoding: 'utf8', env }).stdout.trim();
    if (!q) break;
    // a job whose dependency failed would wait for ever: cancel it and report what ran
    if (q.split('\n').every((l) => l.endsWith('DependencyNeverSatisfied'))) {
      spawnSync('scancel', ids, { env });
      await sleep(500);
      break;
    }
    await sleep(200);
  }
  return ids.flatMap((id) => spawnSync('scontrol', ['-o', 'show', 'job', id], { encoding: 'utf8', env }).stdout.trim().split('\n').filter(Boolean));
}
