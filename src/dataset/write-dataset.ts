import { mkdir, rename, rm, writeFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import pLimit from 'p-limit';
import { SPLITS } from '../split/assign.ts';
import type { AssembledDataset, ToolVersions } from './assemble.ts';
import { attributionMarkdown } from './attribution.ts';
import { renderCardMarkdown } from './card.ts';
import { provenanceDocument } from './provenance.ts';
import { serialiseIndex } from './records.ts';
import type { FolderTransaction } from './write-folder.ts';

/**
 * Writes an assembled dataset into a folder transaction: moves each cut patch
 * from `staging/<id>.png` to `patches/<split>/<class>/<id>.png`, and writes the
 * index, split lists, card, lock, provenance, failures and attribution. Only
 * writes: every byte was decided by the assemble stage (and `lockText`).
 */
export async function writeDataset(tx: FolderTransaction, staging: string, data: AssembledDataset, lockText: string, name: string, tool: ToolVersions): Promise<void> {
  const { records, failures, card } = data;
  for (const dir of new Set(records.map((r) => dirname(tx.path(r.file))))) await mkdir(dir, { recursive: true });
  const moveLimit = pLimit(16);
  await Promise.all(records.map((r) => moveLimit(() => rename(join(staging, `${r.id}.png`), tx.path(r.file)))));
  await writeFile(tx.path('index.jsonl'), serialiseIndex(records));
  await mkdir(tx.path('splits'), { recursive: true });
  for (const s of SPLITS) await writeFile(tx.path(`splits/${s}.txt`), records.filter((r) => r.split === s).map((r) => `${r.id}\n`).join(''));
  await writeFile(tx.path('card.json'), `${JSON.stringify(card, null, 2)}\n`);
  await writeFile(tx.path('card.md'), renderCardMarkdown(card));
  await writeFile(tx.path('lock.json'), lockText);
  await writeFile(tx.path('provenance.jsonld'), `${JSON.stringify(provenanceDocument(name, tool, records), null, 2)}\n`);
  await writeFile(tx.path('failures.jsonl'), failures.map((f) => JSON.stringify(f)).join('\n') + (failures.length ? '\n' : ''));
  await writeFile(tx.path('ATTRIBUTION.md'), attributionMarkdown(name, records));
  await rm(staging, { recursive: true, force: true });
}
