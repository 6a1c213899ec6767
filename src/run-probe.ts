import { mkdir, readFile, rename, writeFile } from 'node:fs/promises';
import { basename, dirname, join, resolve } from 'node:path';
import { UsageError } from './errors.ts';
import { parseIndex } from './dataset/records.ts';
import { describeFiles } from './probe/describe-pool.ts';
import { probe, ProbePatch, ProbeReport } from './probe/probe.ts';

/** Where the probe writes for a dataset folder: beside it, never inside the hashed folder. */
export function defaultProbeDir(dataset: string): string {
  return join(dirname(resolve(dataset)), `${basename(resolve(dataset))}-probe`);
}

/**
 * Runs the probe on a dataset folder: decodes every patch, computes its
 * descriptors, and writes `probe.json` into `outDir` (default `<dataset>-probe/`).
 * The seed and the near-duplicate distance come from the dataset's card.
 */
export async function runProbe(dataset: string, outDir = defaultProbeDir(dataset), onProgress?: (done: number, total: number) => void): Promise<{ report: ProbeReport; file: string }> {
  let index: string, card: { collection?: { seed?: string; recipe?: { dedupe?: { maxDistance?: number } } } };
  try {
    index = await readFile(join(dataset, 'index.jsonl'), 'utf8');
    card = JSON.parse(await readFile(join(dataset, 'card.json'), 'utf8'));
  } catch {
    throw new UsageError(`${dataset} is not a swatchbook dataset (index.jsonl and card.json are needed)`);
  }
  const records = parseIndex(index).filter((r) => r.split === 'train' || r.split === 'test');
  const features = await describeFiles(records.map((r) => join(dataset, r.file)), { ...(onProgress ? { onProgress } : {}) });
  const patches: ProbePatch[] = records.map((r, i) => ({ id: r.id, split: r.split, label: r.label, phash: r.phash, features: features[i]! }));
  const report = probe(patches, { seed: card.collection?.seed ?? 'swatchbook', maxHashDistance: card.collection?.recipe?.dedupe?.maxDistance ?? 4 });
  await mkdir(outDir, { recursive: true });
  const file = join(outDir, 'probe.json');
  await writeFile(`${file}.partial`, `${JSON.stringify(report, null, 2)}\n`);
  await rename(`${file}.partial`, file);
  return { report, file };
}
