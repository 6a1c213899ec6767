import { createHash } from 'node:crypto';
import { createReadStream, createWriteStream } from 'node:fs';
import { once } from 'node:events';
import { createInterface } from 'node:readline';

/** A written file's size in bytes and the sha256 of its bytes (what `croissant.json` lists). */
export interface WrittenFile {
  sha256: string;
  size: number;
}

/** Parts are gathered into writes of about this many bytes. */
const WRITE_BATCH = 1 << 20;

/**
 * Writes text given in parts (lines, say) to a file, hashing it on the way, and
 * never holds more than about a megabyte of it: an index of a million patches is
 * over a gigabyte of text, more than one JavaScript string can hold.
 */
export async function writeTextParts(path: string, parts: Iterable<string>): Promise<WrittenFile> {
  const out = createWriteStream(path);
  const hash = createHash('sha256');
  let size = 0;
  let batch: string[] = [];
  let batchLength = 0;
  const flush = async () => {
    if (!batch.length) return;
    const bytes = Buffer.from(batch.join(''), 'utf8');
    batch = [];
    batchLength = 0;
    hash.update(bytes);
    size += bytes.length;
    if (!out.write(bytes)) await once(out, 'drain');
  };
  const closed = new Promise<void>((resolve, reject) => {
    out.on('error', reject);
    out.on('close', resolve);
  });
  closed.catch(() => undefined); // awaited below; a write error must not surface as an unhandled rejection first
  try {
    for (const part of parts) {
      batch.push(part);
      batchLength += part.length;
      if (batchLength >= WRITE_BATCH) await flush();
    }
    await flush();
  } finally {
    out.end();
  }
  await closed;
  return { sha256: hash.digest('hex'), size };
}

/** The digest of bytes already written elsewhere (a tar shard). */
export function digestOf(bytes: Buffer): WrittenFile {
  return { sha256: createHash('sha256').update(bytes).digest('hex'), size: bytes.length };
}

/**
 * Calls `fn` with each non-blank line of a text file and its 0-based line number,
 * reading a piece at a time (a file of any size; a whole-file string stops at
 * about half a gigabyte).
 */
export async function forEachLine(path: string, fn: (line: string, index: number) => void): Promise<void> {
  const lines = createInterface({ input: createReadStream(path, { encoding: 'utf8' }), crlfDelay: Infinity });
  let n = 0;
  for await (const line of lines) {
    if (line.trim() !== '') fn(line, n);
    n++;
  }
}

/** The results of `fn` over each non-blank line of a text file, in order (see `forEachLine`). */
export async function mapLines<T>(path: string, fn: (line: string, index: number) => T): Promise<T[]> {
  const out: T[] = [];
  await forEachLine(path, (line, n) => out.push(fn(line, n)));
  return out;
}
