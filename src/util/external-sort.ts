import { closeSync, mkdirSync, openSync, readSync, rmSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { StringDecoder } from 'node:string_decoder';
import { byString } from './hash.ts';

/** A line to sort and the key it sorts by (compared part by part, as strings). */
interface Entry {
  key: readonly string[];
  seq: number;
  line: string;
}

/** Characters of lines held before a sorted run is written out (a bound that does not grow with the input). */
export const DEFAULT_RUN_CHARS = 4 << 20;
/** Runs merged at once: when a level holds this many runs they become one run of the next level. */
const FAN_IN = 16;

function compareEntries(a: Entry, b: Entry): number {
  const n = Math.min(a.key.length, b.key.length);
  for (let i = 0; i < n; i++) {
    const c = byString(a.key[i]!, b.key[i]!);
    if (c) return c;
  }
  return a.key.length - b.key.length || a.seq - b.seq;
}

/** A sorted stream of entries: its current head and how to advance. */
interface Source {
  head: Entry | undefined;
  next: () => Entry | undefined;
  close: () => void;
}

/**
 * Sorts text lines by a key in bounded memory: lines are held until they reach
 * `runChars` characters, then sorted and written to a run file in `dir`; runs
 * are merged 16 at a time into longer runs (so at most a few dozen are ever open),
 * and reading merges what is left. Ties keep the order lines were added in (a
 * stable sort), so the result is exactly `Array.prototype.sort` of all lines by
 * the same key. Synchronous, so pure code can hand it lines through a plain
 * callback. Lines must not hold a newline; `dir` is the sorter's own (removed
 * when the sorted lines have been read).
 */
export class ExternalSort {
  private buffer: Entry[] = [];
  private chars = 0;
  private seq = 0;
  private made = 0;
  /** Run files by level: a level-L run holds about FAN_IN^L buffers of lines. */
  private readonly levels: string[][] = [];

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

  /** Run files written so far, merged runs included. */
  get runsWritten(): number {
    return this.made;
  }

  private spill(): void {
    this.buffer.sort(compareEntries);
    let i = 0;
    const run = this.writeRun({ head: this.buffer[i++], next: () => this.buffer[i++], close: () => undefined });
    this.buffer = [];
    this.chars = 0;
    this.addRun(0, run);
  }

  private addRun(level: number, path: string): void {
    (this.levels[level] ??= []).push(path);
    if (this.levels[level]!.length < FAN_IN) return;
    const paths = this.levels[level]!;
    this.levels[level] = [];
    const merged = this.writeRun(mergeSources(paths.map(readRun)));
    for (const p of paths) rmSync(p, { force: true });
    this.addRun(level + 1, merged);
  }

  /** Writes a sorted stream of entries to a new run file. */
  private writeRun(source: Source): string {
    mkdirSync(this.dir, { recursive: true });
    const path = join(this.dir, `run-${this.made++}.txt`);
    const fd = openSync(path, 'w');
    try {
      let batch = '';
      for (let e = source.head; e; e = source.next()) {
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
      source.close();
    }
    return path;
  }

  /**
   * Every line added, in key order, with its key (each run read a piece at a
   * time). Removes the run files when done. `dropRepeats` drops a line whose key
   * equals the line before it (the first added is kept) when it says so for that key.
   */
  *sortedEntries(opts: SortedOptions = {}): Generator<{ key: readonly string[]; line: string }> {
    this.buffer.sort(compareEntries);
    let i = 0;
    const sources = [...this.levels.flat().map(readRun), { head: this.buffer[i++], next: () => this.buffer[i++], close: () => undefined }];
    const merged = mergeSources(sources);
    let last: readonly string[] | undefined;
    try {
      for (let e = merged.head; e; e = merged.next()) {
        const repeat = last !== undefined && e.key.length === last.length && e.key.every((k, j) => k === last![j]);
        last = e.key;
        if (!(repeat && opts.dropRepeats?.(e.key))) yield e;
      }
    } finally {
      merged.close();
      this.buffer = [];
      rmSync(this.dir, { recursive: true, force: true });
    }
  }

  /** Every line added, in key order (see `sortedEntries`). */
  *sorted(opts: SortedOptions = {}): Generator<string> {
    for (const { line } of this.sortedEntries(opts)) yield line;
  }
}

export interface SortedOptions {
  dropRepeats?: (key: readonly string[]) => boolean;
}

/** Merges sorted sources into one (the smallest head first; a few dozen sources at most, so a linear scan). */
function mergeSources(sources: Source[]): Source {
  const pick = (): Entry | undefined => {
    let best: Source | undefined;
    for (const s of sources) if (s.head && (!best || compareEntries(s.head, best.head!) < 0)) best = s;
    if (!best) return undefined;
    const e = best.head!;
    best.head = best.next();
    return e;
  };
  return { head: pick(), next: pick, close: () => sources.forEach((s) => s.close()) };
}

/** A run file as a sorted source. */
function readRun(path: string): Source {
  const reader = new LineReader(path);
  const next = () => {
    const raw = reader.next();
    if (raw === undefined) return undefined;
    const tab = raw.indexOf('\t');
    const parts = JSON.parse(raw.slice(0, tab)) as (string | number)[];
    return { key: parts.slice(0, -1) as string[], seq: parts[parts.length - 1] as number, line: raw.slice(tab + 1) };
  };
  return { head: next(), next, close: () => reader.close() };
}

/**
 * Reads a UTF-8 text file line by line, synchronously, 64 KiB at a time into one
 * buffer per file (a new buffer per read would leave the garbage collector
 * gigabytes of short-lived memory outside the heap to find while runs are merged).
 */
class LineReader {
  private fd: number | undefined;
  private readonly chunk = Buffer.allocUnsafe(1 << 16);
  private readonly decoder = new StringDecoder('utf8');
  private text = '';
  private at = 0;
  constructor(path: string) {
    this.fd = openSync(path, 'r');
  }
  close(): void {
    if (this.fd !== undefined) closeSync(this.fd);
    this.fd = undefined;
  }
  next(): string | undefined {
    for (;;) {
      const nl = this.text.indexOf('\n', this.at);
      if (nl >= 0) {
        const line = this.text.slice(this.at, nl);
        this.at = nl + 1;
        return line;
      }
      const rest = this.text.slice(this.at);
      this.at = 0;
      if (this.fd === undefined) {
        this.text = '';
        return rest === '' ? undefined : rest;
      }
      const n = readSync(this.fd, this.chunk, 0, this.chunk.length, null);
      if (n === 0) {
        this.close();
        this.text = rest + this.decoder.end();
      } else {
        // The decoder keeps a character split across two reads until its last bytes come.
        this.text = rest + this.decoder.write(this.chunk.subarray(0, n));
      }
    }
  }
}
