import { mkdir, readFile, rename, rm, writeFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import type { Recipe } from '../recipe/types.ts';
import { SPLITS } from '../split/assign.ts';
import type { AssembledDataset, ToolVersions } from './assemble.ts';
import { attributionMarkdown } from './attribution.ts';
import { renderCardMarkdown } from './card.ts';
import { croissantDocument, splitMetadataLines } from './loader-files.ts';
import { provenanceDocument } from './provenance.ts';
import { IndexRecord, indexLines } from './records.ts';
import { digestOf, WrittenFile, writeTextParts } from '../util/text-file.ts';
import { prettyJsonParts } from '../util/pretty-json.ts';
import { tarArchive } from './tar.ts';
import type { FolderTransaction } from './write-folder.ts';

/**
 * Writes an assembled dataset into a folder transaction: moves each cut patch
 * from `staging/<id>.png` to `patches/<split>/<class>/<id>.png`, and writes the
 * index, split lists, per-split loader metadata, card, lock, provenance,
 * failures, attribution, the canvases (for the report), the skipped regions
 * and the Croissant description. Only writes: every byte
 * was decided by the assemble stage (and `lockText`).
 */
export async function writeDataset(tx: FolderTransaction, staging: string, data: AssembledDataset, lockText: string, recipe: Pick<Recipe, 'name' | 'description' | 'network' | 'shards'>, tool: ToolVersions): Promise<void> {
  const { records, failures, card } = data;
  const dirs = new Set<string>();
  for (const r of records) dirs.add(dirname(r.file));
  for (const dir of dirs) await mkdir(tx.path(dir), { recursive: true });
  await movePatches(tx, staging, records);
  await mkdir(tx.path('splits'), { recursive: true });
  // Files that grow with the patches are written line by line (a million patches make
  // gigabytes of text); each file's digest is taken as it is written, for croissant.json.
  const files = new Map<string, WrittenFile>();
  const write = async (path: string, parts: Iterable<string>) => files.set(path, await writeTextParts(tx.path(path), parts));
  await write('index.jsonl', indexLines(records));
  for (const s of SPLITS) await write(`splits/${s}.txt`, idLines(records, s));
  for (const [path, lines] of splitMetadataLines(records)) await write(path, linesOf(lines));
  await write('card.json', [`${JSON.stringify(card, null, 2)}\n`]);
  await write('card.md', [renderCardMarkdown(card)]);
  await write('lock.json', [lockText]);
  await write('provenance.jsonld', endedByNewline(prettyJsonParts(provenanceDocument(recipe.name, tool, records))));
  await write('failures.jsonl', linesOf(failures.map((f) => JSON.stringify(f))));
  await write('ATTRIBUTION.md', [attributionMarkdown(recipe.name, records)]);
  await write('canvases.json', [`${JSON.stringify(data.canvases, null, 2)}\n`]);
  await write('skipped.jsonl', linesOf(data.skipped.map((x) => JSON.stringify(x))));
  if (recipe.shards) for (const [path, digest] of await writeShards(tx, records, recipe.shards.patchesPerShard)) files.set(path, digest);
  const croissant = croissantDocument({ card, description: recipe.description, records, files, ...(recipe.network.contact ? { contact: recipe.network.contact } : {}) });
  await write('croissant.json', [`${JSON.stringify(croissant, null, 2)}\n`]);
  await rm(staging, { recursive: true, force: true });
}

/** Moves each cut patch into its class folder, 16 renames at a time (a promise per patch would not fit a million). */
async function movePatches(tx: FolderTransaction, staging: string, records: readonly IndexRecord[]): Promise<void> {
  let next = 0;
  const mover = async () => {
    while (next < records.length) {
      const r = records[next++]!;
      await rename(join(staging, `${r.id}.png`), tx.path(r.file));
    }
  };
  await Promise.all(Array.from({ length: 16 }, mover));
}

/**
 * WebDataset-style shards per split: `shards/<split>/<split>-NNNNN.tar`, records in id
 * order, `<id>.png` then `<id>.json` (the index record) next to each other so one
 * sample is a run of consecutive members with one key. Returns the archives by path.
 */
async function writeShards(tx: FolderTransaction, records: readonly IndexRecord[], perShard: number): Promise<Map<string, WrittenFile>> {
  const out = new Map<string, WrittenFile>();
  for (const split of SPLITS) {
    const inSplit = records.filter((r) => r.split === split);
    for (let start = 0, n = 0; start < inSplit.length; start += perShard, n++) {
      const slice = inSplit.slice(start, start + perShard);
      const entries = [];
      for (const r of slice) {
        entries.push({ name: `${r.id}.png`, data: await readFile(tx.path(r.file)) }, { name: `${r.id}.json`, data: Buffer.from(`${JSON.stringify(r)}\n`) });
      }
      const path = `shards/${split}/${split}-${String(n).padStart(5, '0')}.tar`;
      const archive = tarArchive(entries);
      await mkdir(dirname(tx.path(path)), { recursive: true });
      await writeFile(tx.path(path), archive);
      out.set(path, digestOf(archive));
    }
  }
  return out;
}

/** Each line with its newline: the text of a JSON Lines or list file (empty when there are none). */
function* linesOf(lines: Iterable<string>): Generator<string> {
  for (const line of lines) yield `${line}\n`;
}

/** `splits/<split>.txt`: the split's patch ids, one per line, in index order. */
function* idLines(records: readonly IndexRecord[], split: string): Generator<string> {
  for (const r of records) if (r.split === split) yield `${r.id}\n`;
}

/** The parts, then a newline. */
function* endedByNewline(parts: Iterable<string>): Generator<string> {
  yield* parts;
  yield '\n';
}
