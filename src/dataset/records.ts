import type { Rect } from '../geometry/rect.ts';
import type { SplitName } from '../split/assign.ts';

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

export function serialiseIndex(records: readonly IndexRecord[]): string {
  return records.map((r) => JSON.stringify(r)).join('\n') + (records.length ? '\n' : '');
}

export function parseIndex(text: string): IndexRecord[] {
  return text.split('\n').filter((l) => l.trim() !== '').map((l) => JSON.parse(l) as IndexRecord);
}
