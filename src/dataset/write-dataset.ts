import { mkdir, readFile, rename, rm, writeFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import pLimit from 'p-limit';
import type { Recipe } from '../recipe/types.ts';
import { SPLITS } from '../split/assign.ts';
import type { AssembledDataset, ToolVersions } from './assemble.ts';
import { attributionMarkdown } from './attribution.ts';
import { renderCardMarkdown } from './card.ts';
import { croissantDocument, splitMetadataFiles } from './loader-files.ts';
import { provenanceDocument } from './provenance.ts';
import { IndexRecord, serialiseIndex } from './records.ts';
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
  for (const dir of new Set(records.map((r) => dirname(tx.path(r.file))))) await mkdir(dir, { recursive: true });
  const moveLimit = pLimit(16);
  await Promise.all(records.map((r) => moveLimit(() => rename(join(staging, `${r.id}.png`), tx.path(r.file)))));
  const texts = new Map<string, string>([
    ['index.jsonl', serialiseIndex(records)],
    ...SPLITS.map((s) => [`splits/${s}.txt`, records.filter((r) => r.split === s).map((r) => `${r.id}\n`).join('')] as [string, string]),
    ...splitMetadataFiles(records),
    ['card.json', `${JSON.stringify(card, null, 2)}\n`],
    ['card.md', renderCardMarkdown(card)],
    ['lock.json', lockText],
    ['provenance.jsonld', `${JSON.stringify(provenanceDocument(recipe.name, tool, records), null, 2)}\n`],
    ['failures.jsonl', failures.map((f) => JSON.stringify(f)).join('\n') + (failures.length ? '\n' : '')],
    ['ATTRIBUTION.md', attributionMarkdown(recipe.name, records)],
    ['canvases.json', `${JSON.stringify(data.canvases, null, 2)}\n`],
    ['skipped.jsonl', data.skipped.map((x) => JSON.stringify(x)).join('\n') + (data.skipped.length ? '\n' : '')],
  ]);
  const shards = recipe.shards ? await writeShards(tx, records, recipe.shards.patchesPerShard) : new Map<string, Buffer>();
  const croissant = croissantDocument({ card, description: recipe.description, records, files: new Map<string, string | Buffer>([...texts, ...shards]), ...(recipe.network.contact ? { contact: recipe.network.contact } : {}) });
  texts.set('croissant.json', `${JSON.stringify(croissant, null, 2)}\n`);
  await mkdir(tx.path('splits'), { recursive: true });
  for (const [path, text] of texts) await writeFile(tx.path(path), text);
  await rm(staging, { recursive: true, force: true });
}

/**
 * WebDataset-style shards per split: `shards/<split>/<split>-NNNNN.tar`, records in id
 * order, `<id>.png` then `<id>.json` (the index record) next to each other so one
 * sample is a run of consecutive members with one key. Returns the archives by path.
 */
async function writeShards(tx: FolderTransaction, records: readonly IndexRecord[], perShard: number): Promise<Map<string, Buffer>> {
  const out = new Map<string, Buffer>();
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
      out.set(path, archive);
    }
  }
  return out;
}
