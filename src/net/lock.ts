import { readFile } from 'node:fs/promises';
import { byString } from '../util/hash.ts';
import { InputError, redactUrl } from '../errors.ts';
import type { ResponseFacts } from './cache.ts';
import { writeFileAtomic } from './atomic-write.ts';

export const LOCK_VERSION = 1;

/** The lock: every request URL a build used, with the response facts it relied on. */
export interface LockFile {
  lockVersion: number;
  entries: Record<string, Omit<ResponseFacts, 'url'>>;
  /** The split of every group in the last build, and the settings it was made under. */
  splits?: LockedSplits;
}

export interface LockedSplits {
  seed: string;
  groupBy: string;
  fractions: { train: number; val: number; test: number };
  groups: Record<string, 'train' | 'val' | 'test'>;
  /** How this assignment differed from the one before it, when it was made (carried over by reruns that change nothing). */
  churn?: unknown;
}

export function emptyLock(): LockFile {
  return { lockVersion: LOCK_VERSION, entries: {} };
}

/**
 * Builds a lock from facts, sorted by URL so its bytes do not depend on arrival
 * order. Credentials in URLs are removed: they never reach the lock.
 */
export function lockFrom(facts: Iterable<ResponseFacts>, splits?: LockedSplits): LockFile {
  const rows = [...facts].map((f) => ({ ...f, url: redactUrl(f.url) })).sort((a, b) => byString(a.url, b.url));
  const entries: LockFile['entries'] = {};
  for (const f of rows) {
    entries[f.url] = {
      finalUrl: redactUrl(f.finalUrl),
      sha256: f.sha256,
      size: f.size,
      contentType: f.contentType,
      ...(f.etag !== undefined ? { etag: f.etag } : {}),
      ...(f.lastModified !== undefined ? { lastModified: f.lastModified } : {}),
    };
  }
  if (!splits) return { lockVersion: LOCK_VERSION, entries };
  const groups = Object.fromEntries(Object.entries(splits.groups).sort((a, b) => byString(a[0], b[0])));
  const { seed, groupBy, fractions: f, churn } = splits;
  return { lockVersion: LOCK_VERSION, entries, splits: { seed, groupBy, fractions: { train: f.train, val: f.val, test: f.test }, groups, ...(churn !== undefined ? { churn } : {}) } };
}

/** The previous split of every group, when the lock has one made under these settings, and the churn it recorded. */
export function lockedSplits(lock: LockFile | undefined, seed: string, groupBy: string, fractions: { train: number; val: number; test: number }): { groups: Map<string, 'train' | 'val' | 'test'>; churn?: unknown } | undefined {
  const s = lock?.splits;
  if (!s || typeof s !== 'object' || s.seed !== seed || s.groupBy !== groupBy) return undefined;
  if (!s.fractions || s.fractions.train !== fractions.train || s.fractions.val !== fractions.val || s.fractions.test !== fractions.test) return undefined;
  const out = new Map<string, 'train' | 'val' | 'test'>();
  for (const [g, split] of Object.entries(s.groups ?? {})) if (split === 'train' || split === 'val' || split === 'test') out.set(g, split);
  return { groups: out, ...(s.churn !== undefined ? { churn: s.churn } : {}) };
}

export function serialiseLock(lock: LockFile): string {
  return `${JSON.stringify(lock, null, 2)}\n`;
}

export async function writeLock(path: string, lock: LockFile): Promise<void> {
  await writeFileAtomic(path, serialiseLock(lock), true);
}

export async function readLock(path: string): Promise<LockFile | undefined> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch {
    return undefined;
  }
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch {
    throw new InputError('E_JSON_SYNTAX', path, '', 'the lock file is not valid JSON');
  }
  const lock = doc as LockFile;
  if (typeof lock !== 'object' || lock === null || lock.lockVersion !== LOCK_VERSION || typeof lock.entries !== 'object') {
    throw new InputError('E_RECIPE_INVALID', path, '/lockVersion', `expected a lock file of version ${LOCK_VERSION}`);
  }
  return lock;
}

/** The lock row for a request URL (looked up without credentials, as the lock stores them). */
export function lockedEntry(lock: LockFile | undefined, url: string): LockFile['entries'][string] | undefined {
  return lock?.entries[redactUrl(url)];
}
