import { mkdir, rename, rm, writeFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import pLimit from 'p-limit';
import type { Recipe } from '../recipe/types.ts';
import { SPLITS } from '../split/assign.ts';
import type { AssembledDataset, ToolVersions } from './assemble.ts';
import { attributionMarkdown } from './attribution.ts';
import { renderCardMarkdown } from './card.ts';
import { croissantDocument, splitMetadataFiles } from './loader-files.ts';
import { provenanceDocument } from './provenance.ts';
import { serialiseIndex } from './records.ts';
import type { FolderTransaction } from './write-folder.ts';

/**
 * Writes an assembled dataset into a folder transaction: moves each cut patch
 * from `staging/<id>.png` to `patches/<split>/<class>/<id>.png`, and writes the
 * index, split lists, per-split loader metadata, card, lock, provenance,
 * failures, attribution and the Croissant description. Only writes: every byte
 * was decided by the assemble stage (and `lockText`).
 */
export async function writeDataset(tx: FolderTransaction, staging: string, data: AssembledDataset, lockText: string, recipe: Pick<Recipe, 'name' | 'description' | 'network'>, tool: ToolVersions): Promise<void> {
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
  ]);
  const croissant = croissantDocument({ card, description: recipe.description, records, files: texts, ...(recipe.network.contact ? { contact: recipe.network.contact } : {}) });
  texts.set('croissant.json', `${JSON.stringify(croissant, null, 2)}\n`);
  await mkdir(tx.path('splits'), { recursive: true });
  for (const [path, text] of texts) await writeFile(tx.path(path), text);
  await rm(staging, { recursive: true, force: true });
}
