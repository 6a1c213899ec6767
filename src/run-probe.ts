import { mkdir, readdir, readFile, rename, stat, writeFile } from 'node:fs/promises';
import { basename, dirname, extname, join, resolve } from 'node:path';
import { InputError, UsageError } from './errors.ts';
import { decodeRgb, extractRgb } from './image/pixels.ts';
import { describePatch } from './probe/describe.ts';
import { IndexRecord, readIndexFile } from './dataset/records.ts';
import { describeFiles } from './image/describe-pool.ts';
import { crossDomain, CrossDomainReport, probe, ProbePatch, ProbeReport, QueryPatch } from './probe/probe.ts';
import { byString, seededUnit } from './util/hash.ts';

/** Where the probe writes for a dataset folder: beside it, never inside the hashed folder. */
export function defaultProbeDir(dataset: string): string {
  return join(dirname(resolve(dataset)), `${basename(resolve(dataset))}-probe`);
}

/**
 * Runs the probe on a dataset folder: decodes every patch, computes its
 * descriptors, and writes `probe.json` into `outDir` (default `<dataset>-probe/`).
 * The seed and the near-duplicate distance come from the dataset's card.
 */
export async function runProbe(
  dataset: string,
  outDir = defaultProbeDir(dataset),
  onProgress?: (done: number, total: number) => void,
  options: { queries?: string } = {},
): Promise<{ report: ProbeReport & { queries?: QueriesReport }; file: string }> {
  let index: IndexRecord[], card: { collection?: { seed?: string; recipe?: { dedupe?: { maxDistance?: number }; patch?: { size?: number } } } };
  try {
    index = await readIndexFile(join(dataset, 'index.jsonl'));
    card = JSON.parse(await readFile(join(dataset, 'card.json'), 'utf8'));
  } catch {
    throw new UsageError(`${dataset} is not a swatchbook dataset (index.jsonl and card.json are needed)`);
  }
  const records = index.filter((r) => r.split === 'train' || r.split === 'test');
  const features = await describeFiles(records.map((r) => join(dataset, r.file)), { ...(onProgress ? { onProgress } : {}) });
  const patches: ProbePatch[] = records.map((r, i) => ({ id: r.id, split: r.split, label: r.label, phash: r.phash, features: features[i]! }));
  const seed = card.collection?.seed ?? 'swatchbook';
  const report: ProbeReport & { queries?: QueriesReport } = probe(patches, { seed, maxHashDistance: card.collection?.recipe?.dedupe?.maxDistance ?? 4 });
  if (options.queries) {
    const size = card.collection?.recipe?.patch?.size ?? 64;
    const { queries, images } = await cutQueries(options.queries, size, seed);
    report.queries = {
      folder: basename(resolve(options.queries)),
      patchSize: size,
      perImageLimit: QUERY_PATCHES_PER_IMAGE,
      note: 'query images are cut at their own resolution into the dataset\'s patch size, not resampled: they should be at the dataset\'s scale',
      ...crossDomain(queries, patches, images),
    };
  }
  await mkdir(outDir, { recursive: true });
  const file = join(outDir, 'probe.json');
  await writeFile(`${file}.partial`, `${JSON.stringify(report, null, 2)}\n`);
  await rename(`${file}.partial`, file);
  return { report, file };
}

export type QueriesReport = CrossDomainReport & { folder: string; patchSize: number; perImageLimit: number; note: string };

const QUERY_PATCHES_PER_IMAGE = 64;
const IMAGE_EXTENSIONS = new Set(['.png', '.jpg', '.jpeg', '.tif', '.tiff', '.webp']);

/**
 * Reads a folder of images in class subfolders (the user's files: a problem is
 * exit 2 naming the file) and cuts each into non-overlapping patches of the given
 * size from its top-left corner; an image with more than the per-image limit
 * gives a seeded sample of them.
 */
export async function cutQueries(dir: string, size: number, seed: string): Promise<{ queries: QueryPatch[]; images: number }> {
  let classes: string[];
  try {
    classes = (await readdir(dir, { withFileTypes: true })).filter((e) => e.isDirectory()).map((e) => e.name).sort(byString);
  } catch (err) {
    throw new InputError('E_USAGE', dir, '', `cannot read the queries folder (${(err as NodeJS.ErrnoException).code ?? (err as Error).message})`);
  }
  if (classes.length === 0) throw new InputError('E_USAGE', dir, '', 'the queries folder has no class subfolders (expected <dir>/<class>/<image files>)');
  const queries: QueryPatch[] = [];
  let images = 0;
  for (const label of classes) {
    const files = (await readdir(join(dir, label))).filter((f) => IMAGE_EXTENSIONS.has(extname(f).toLowerCase())).sort(byString);
    for (const f of files) {
      const path = join(dir, label, f);
      if (!(await stat(path)).isFile()) continue;
      let rgb;
      try {
        rgb = await decodeRgb(await readFile(path));
      } catch (err) {
        throw new InputError('E_IMAGE_DECODE', path, '', `cannot decode this image (${(err as Error).message})`);
      }
      images++;
      const origins: { x: number; y: number }[] = [];
      for (let y = 0; y + size <= rgb.height; y += size) for (let x = 0; x + size <= rgb.width; x += size) origins.push({ x, y });
      const chosen = origins.length > QUERY_PATCHES_PER_IMAGE
        ? [...origins].sort((a, b) => seededUnit(seed, 'queries', label, f, a.x, a.y) - seededUnit(seed, 'queries', label, f, b.x, b.y)).slice(0, QUERY_PATCHES_PER_IMAGE)
        : origins;
      for (const o of chosen) queries.push({ label, file: `${label}/${f}`, x: o.x, y: o.y, features: describePatch(extractRgb(rgb, o.x, o.y, size, size)) });
    }
  }
  return { queries, images };
}
