/**
 * Slurm batch scripts for a sharded run (pure: text in, text out). A job array
 * harvests one shard per task (`SLURM_ARRAY_TASK_ID` picks it), and a merge job
 * that depends on the whole array (afterok) unions the caches and builds.
 */
export interface SlurmScriptOptions {
  /** The command that runs swatchbook, already quoted for sh: node and the bin script. */
  command: string;
  planDir: string;
  shards: number;
  partition?: string;
  time?: string;
  jobName: string;
  /** The recipe's output folder for the merged dataset. */
  out: string;
}

/** Quotes a string for POSIX sh. */
export function shellQuote(s: string): string {
  return /^[A-Za-z0-9_./:=@%+-]+$/.test(s) ? s : `'${s.replace(/'/g, `'\\''`)}'`;
}

function header(o: SlurmScriptOptions, name: string, log: string, extra: string[]): string {
  return [
    '#!/bin/sh',
    `#SBATCH --job-name=${o.jobName}-${name}`,
    `#SBATCH --output=${log}`,
    ...(o.partition ? [`#SBATCH --partition=${o.partition}`] : []),
    ...(o.time ? [`#SBATCH --time=${o.time}`] : []),
    '#SBATCH --ntasks=1',
    ...extra,
    'set -eu',
  ].join('\n');
}

/** The harvest array: task K fetches shard K into `<plan>/shard-K/cache`. One host per shard keeps every server's load as on one machine. */
export function harvestArrayScript(o: SlurmScriptOptions): string {
  return `${header(o, 'harvest', `${o.planDir}/slurm-harvest-%A_%a.out`, [`#SBATCH --array=0-${o.shards - 1}`, '#SBATCH --cpus-per-task=1'])}
# Each task reads its shard from SLURM_ARRAY_TASK_ID; a task killed and started again resumes from its cache.
exec ${o.command} harvest --plan ${shellQuote(o.planDir)} --quiet
`;
}

/** The merge job: unions the shard caches (hashes verified), then assembles and writes the dataset. */
export function mergeScript(o: SlurmScriptOptions): string {
  const caches = Array.from({ length: o.shards }, (_, k) => shellQuote(`${o.planDir}/shard-${k}/cache`)).join(' ');
  return `${header(o, 'merge', `${o.planDir}/slurm-merge-%j.out`, ['#SBATCH --cpus-per-task=2'])}
exec ${o.command} merge --plan ${shellQuote(o.planDir)} --out ${shellQuote(o.out)} --quiet ${caches}
`;
}
