import { closeSync, mkdirSync, openSync, readSync, rmSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { byString } from './hash.ts';

/** A line to sort and the key it sorts by (compared part by part, as strings). */
interface Entry {
  key: readonly string[];
  seq: number;
  line: string;
}

/** Characters of lines held before a sorted run is written out (a bound that does not grow with the input). */
export const DEFAULT_RUN_CHARS = 16 << 20;

function compareEntries(a: Entry, b: Entry): number {
  const n = Math.min(a.key.length, b.key.length);
  for (let i = 0; i < n; i++) {
    const c = byString(a.key[i]!, b.key[i]!);
    if (c) return c;
  }
  return a.key.length - b.key.length || a.seq - b.seq;
}

/**
 * Sorts text lines by a key in bounded memory: lines are held until they reach
 * `runChars` characters, then sorted and written to a run file in `dir`; reading
 * merges the runs. Ties keep the order lines were added in (a stable sort), so
 * the result is exactly `Array.prototype.sort` of all lines by the same key.
 * Synchronous, so pure code can hand it lines through a plain callback. Lines must not hold a newline;
 * `dir` is the sorter's own (removed when the sorted lines have been read).
 */
export class ExternalSort {
  private buffer: Entry[] = [];
  private chars = 0;
  private seq = 0;
  private readonly runs: string[] = [];

  constructor(
    private readonly dir: string,
    private readonly runChars = DEFAULT_RUN_CHARS,
  ) {}

  add(key: readonly string[], line: string): void {
    this.buffer.push({ key, seq: this.seq++, line });
    this.chars += line.length;
    if (this.chars >= this.runChars) this.spill();
  }

  /** Lines added so far. */
  get count(): number {
    return this.seq;
  }

  private spill(): void {
    this.buffer.sort(compareEntries);
    mkdirSync(this.dir, { recursive: true });
    const path = join(this.dir, `run-${this.runs.length}.txt`);
    const fd = openSync(path, 'w');
    try {
      let batch = '';
      for (const e of this.buffer) {
        // A JSON array text holds no raw tab or newline: the first tab ends the key.
        batch += `${JSON.stringify([...e.key, e.seq])}\t${e.line}\n`;
        if (batch.length >= 1 << 20) {
          writeSync(fd, batch);
          batch = '';
        }
      }
      if (batch) writeSync(fd, batch);
    } finally {
      closeSync(fd);
    }
    this.runs.push(path);
    this.buffer = [];
    this.chars = 0;
  }

  /**
   * Every line added, in key order (each run read a piece at a time). Removes the
   * run files when done. `dropRepeats` drops a line whose key equals the line
   * before it (the first added is kept) when it says so for that key.
   */
  *sorted(opts: { dropRepeats?: (key: readonly string[]) => boolean } = {}): Generator<string> {
    this.buffer.sort(compareEntries);
    const readers = this.runs.map((path) => new LineReader(path));
    const heads: { next: () => Entry | undefined; head: Entry | undefined }[] = readers.map((reader) => {
      const next = () => {
        const raw = reader.next();
        if (raw === undefined) return undefined;
        const tab = raw.indexOf('\t');
        const parts = JSON.parse(raw.slice(0, tab)) as (string | number)[];
        return { key: parts.slice(0, -1) as string[], seq: parts[parts.length - 1] as number, line: raw.slice(tab + 1) };
      };
      return { next, head: next() };
    });
    let i = 0;
    const memory = { next: () => this.buffer[i++], head: this.buffer[i++] };
    heads.push(memory);
    let last: readonly string[] | undefined;
    try {
      for (;;) {
        let best: (typeof heads)[number] | undefined;
        for (const h of heads) if (h.head && (!best || compareEntries(h.head, best.head!) < 0)) best = h;
        if (!best) break;
        const { key, line } = best.head!;
        const repeat = last !== undefined && key.length === last.length && key.every((k, j) => k === last![j]);
        if (!(repeat && opts.dropRepeats?.(key))) yield line;
        last = key;
        best.head = best.next();
      }
    } finally {
      for (const r of readers) r.close();
      this.buffer = [];
      rmSync(this.dir, { recursive: true, force: true });
    }
  }
}

/** Reads a UTF-8 text file line by line, synchronously, 64 KiB at a time. */
class LineReader {
  private fd: number | undefined;
  private pending = Buffer.alloc(0);
  constructor(path: string) {
    this.fd = openSync(path, 'r');
  }
  close(): void {
    if (this.fd !== undefined) closeSync(this.fd);
    this.fd = undefined;
  }
  next(): string | undefined {
    for (;;) {
      const nl = this.pending.indexOf(10);
      if (nl >= 0) {
        const line = this.pending.toString('utf8', 0, nl);
        this.pending = this.pending.subarray(nl + 1);
        return line;
      }
      if (this.fd === undefined) {
        if (!this.pending.length) return undefined;
        const rest = this.pending.toString('utf8');
        this.pending = Buffer.alloc(0);
        return rest;
      }
      const chunk = Buffer.allocUnsafe(1 << 16);
      const n = readSync(this.fd, chunk, 0, chunk.length, null);
      if (n === 0) {
        closeSync(this.fd);
        this.fd = undefined;
      } else {
        this.pending = this.pending.length ? Buffer.concat([this.pending, chunk.subarray(0, n)]) : chunk.subarray(0, n);
      }
    }
  }
}
