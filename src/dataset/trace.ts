import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { UsageError } from '../errors.ts';
import { readIndexFile, IndexRecord } from './records.ts';

/** What trace reads from the dataset's lock.json: the response facts by request URL. */
interface LockedFacts {
  entries: Record<string, { sha256?: string; etag?: string | null; lastModified?: string | null; finalUrl?: string | null }>;
}

export interface TraceLink {
  step: string;
  facts: Record<string, unknown>;
}

/** The chain of provenance of one patch, from its file back to the rights statement. */
export async function tracePatch(dataset: string, patchId: string): Promise<{ record: IndexRecord; chain: TraceLink[] }> {
  let records: IndexRecord[];
  try {
    records = await readIndexFile(join(dataset, 'index.jsonl'));
  } catch {
    throw new UsageError(`no index.jsonl in ${dataset}; is it a swatchbook dataset folder?`);
  }
  const record = records.find((r) => r.id === patchId);
  if (!record) throw new UsageError(`patch ${patchId} is not in ${dataset}/index.jsonl`);
  let lock: LockedFacts = { entries: {} };
  try {
    lock = JSON.parse(await readFile(join(dataset, 'lock.json'), 'utf8')) as LockedFacts;
  } catch {
    // trace still works without the lock, with fewer facts
  }
  const chain: TraceLink[] = [
    { step: 'patch', facts: { id: record.id, file: record.file, sha256: record.sha256, label: record.label, split: record.split, phash: record.phash, coverage: record.coverage, canvasRegion: record.canvasRegion, imageRegion: record.imageRegion, scale: record.scale } },
    {
      step: 'crop',
      facts: {
        key: record.crop,
        requests: record.requests.map((url) => {
          const resp = record.responses.find((r) => r.url === url) ?? record.responses.find((r) => lock.entries[r.url]);
          const locked = lock.entries[resp?.url ?? url];
          return { url, responseUrl: resp?.url ?? url, sha256: resp?.sha256 ?? locked?.sha256 ?? null, etag: locked?.etag ?? null, lastModified: locked?.lastModified ?? null, finalUrl: locked?.finalUrl ?? null };
        }),
      },
    },
    { step: 'image service', facts: { id: record.service.id, imageApi: record.service.version, level: record.service.level } },
    { step: 'canvas and annotation', facts: { canvas: record.canvas, annotation: record.annotation, label: record.label, sourceLabel: record.sourceLabel, annotator: record.annotator, kind: record.kind } },
    { step: 'manifest and collection', facts: { manifest: record.manifest, collections: record.collections } },
    { step: 'rights', facts: { rights: record.rights, requiredStatement: record.requiredStatement, provider: record.provider } },
  ];
  return { record, chain };
}

export function renderTrace(chain: readonly TraceLink[]): string {
  const lines: string[] = [];
  chain.forEach((link, i) => {
    lines.push(`${i === 0 ? '' : '  ← '}${link.step}`);
    for (const [k, v] of Object.entries(link.facts)) {
      if (Array.isArray(v) && v.length && typeof v[0] === 'object') {
        for (const item of v) lines.push(`      ${k}: ${Object.entries(item as Record<string, unknown>).filter(([, x]) => x !== null).map(([a, b]) => `${a}=${b}`).join('  ')}`);
      } else {
        lines.push(`      ${k}: ${typeof v === 'object' && v !== null ? JSON.stringify(v) : String(v)}`);
      }
    }
  });
  return lines.join('\n');
}
