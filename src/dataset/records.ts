import type { Rect } from '../geometry/rect.ts';
import type { SplitName } from '../split/assign.ts';
import { mapLines } from '../util/text-file.ts';

/** One line of index.jsonl: a patch and its provenance. Keys are written in this order. */
export interface IndexRecord {
  id: string;
  split: SplitName;
  label: string;
  kind: 'positive' | 'negative';
  file: string;
  sha256: string;
  /** 64-bit difference hash, 16 hex digits. */
  phash: string;
  coverage: number;
  group: string;
  manifest: string;
  collections: string[];
  canvas: string;
  annotation: string | null;
  annotator: string | null;
  sourceLabel: string | null;
  /** Every body value of the annotation, with purpose and language where given (attributes to filter and stratify by). */
  tags: { value: string; purpose: string | null; language: string | null; raw: string | null }[];
  /** When the painting body was a Choice: the item taken (the first, Web Annotation §3.2.7) and how many there were. */
  bodyChoice: { chosen: string; of: number } | null;
  service: { id: string; version: number; level: number };
  requests: string[];
  responses: { url: string; sha256: string }[];
  canvasRegion: Rect;
  imageRegion: Rect;
  scale: { pixelsPerCanvasUnit: number; basis: string; mmPerCanvasUnit: number | null };
  crop: string;
  rights: string | null;
  requiredStatement: { label: string; value: string } | null;
  provider: string[];
  logos: string[];
  partOf: string[];
}

/** The lines of index.jsonl, each with its newline (written one by one: the whole text may exceed a string). */
export function* indexLines(records: readonly IndexRecord[]): Generator<string> {
  for (const r of records) yield `${JSON.stringify(r)}\n`;
}

export function serialiseIndex(records: readonly IndexRecord[]): string {
  return [...indexLines(records)].join('');
}

/** The records of an index.jsonl file, read a line at a time (an index of any size). */
export function readIndexFile(path: string): Promise<IndexRecord[]> {
  return mapLines(path, (line) => JSON.parse(line) as IndexRecord);
}

export function parseIndex(text: string): IndexRecord[] {
  return text.split('\n').filter((l) => l.trim() !== '').map((l) => JSON.parse(l) as IndexRecord);
}
