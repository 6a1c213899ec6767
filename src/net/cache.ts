import { readdir, readFile, rm } from 'node:fs/promises';
import { join } from 'node:path';
import { sha256Hex } from '../util/hash.ts';
import { writeFileAtomic } from './atomic-write.ts';

/** What we saw when a URL was fetched: the lock file's row. */
export interface ResponseFacts {
  url: string;
  finalUrl: string;
  sha256: string;
  size: number;
  contentType: string;
  etag?: string;
  lastModified?: string;
}

/**
 * Content-addressed store: bodies under their sha256, and for each URL a small
 * ref file with its response facts. Every write is atomic; every read is
 * verified, and a corrupt body is deleted and reported as missing.
 */
export class ContentCache {
  /**
   * Names of the ref files in each `refs/<xx>/` folder, listed once per folder: a lookup
   * for a URL this cache has never seen then costs no file open (a fresh harvest asks once
   * per request). Refs written later by this process are added; another process's new refs
   * are seen by the next process (at worst a piece is fetched again, never a wrong body).
   */
  private readonly refNames = new Map<string, Promise<Set<string>>>();

  constructor(readonly dir: string) {}

  private refsIn(prefix: string): Promise<Set<string>> {
    let names = this.refNames.get(prefix);
    if (!names) {
      names = readdir(join(this.dir, 'refs', prefix)).then((list) => new Set(list), () => new Set<string>());
      this.refNames.set(prefix, names);
    }
    return names;
  }

  private objectPath(sha: string): string {
    return join(this.dir, 'objects', sha.slice(0, 2), sha);
  }
  private refPath(url: string): string {
    const h = sha256Hex(url);
    return join(this.dir, 'refs', h.slice(0, 2), `${h}.json`);
  }

  async putBody(body: Uint8Array): Promise<string> {
    const sha = sha256Hex(body);
    await writeFileAtomic(this.objectPath(sha), body);
    return sha;
  }

  /** The body with this hash, or undefined when absent or corrupt (a corrupt file is removed). */
  async getBody(sha: string): Promise<Buffer | undefined> {
    let data: Buffer;
    try {
      data = await readFile(this.objectPath(sha));
    } catch {
      return undefined;
    }
    if (sha256Hex(data) !== sha) {
      await rm(this.objectPath(sha), { force: true });
      return undefined;
    }
    return data;
  }

  async putRef(facts: ResponseFacts): Promise<void> {
    const h = sha256Hex(facts.url);
    await writeFileAtomic(this.refPath(facts.url), `${JSON.stringify(facts)}\n`);
    (await this.refsIn(h.slice(0, 2))).add(`${h}.json`);
  }

  async getRef(url: string): Promise<ResponseFacts | undefined> {
    const h = sha256Hex(url);
    if (!(await this.refsIn(h.slice(0, 2))).has(`${h}.json`)) return undefined;
    try {
      const parsed = JSON.parse(await readFile(this.refPath(url), 'utf8')) as ResponseFacts;
      return parsed.url === url && typeof parsed.sha256 === 'string' ? parsed : undefined;
    } catch {
      return undefined;
    }
  }

  /** A derived record (build results keyed by the hash of their inputs), or undefined. */
  async getDerived<T>(key: string): Promise<T | undefined> {
    try {
      return JSON.parse(await readFile(join(this.dir, 'derived', key.slice(0, 2), `${key}.json`), 'utf8')) as T;
    } catch {
      return undefined;
    }
  }

  /** Keys of every derived record in this cache, sorted. */
  async derivedKeys(): Promise<string[]> {
    const root = join(this.dir, 'derived');
    const keys: string[] = [];
    for (const prefix of await readdir(root).catch(() => [] as string[])) {
      for (const name of await readdir(join(root, prefix)).catch(() => [] as string[])) if (name.endsWith('.json')) keys.push(name.slice(0, -5));
    }
    return keys.sort();
  }

  async putDerived(key: string, value: unknown): Promise<void> {
    await writeFileAtomic(join(this.dir, 'derived', key.slice(0, 2), `${key}.json`), `${JSON.stringify(value)}\n`);
  }

  /** Removes temporary files left by killed processes (their pid no longer runs). */
  async sweepTemp(): Promise<number> {
    let removed = 0;
    const walk = async (d: string): Promise<void> => {
      let entries;
      try {
        entries = await readdir(d, { withFileTypes: true });
      } catch {
        return;
      }
      for (const e of entries) {
        const p = join(d, e.name);
        if (e.isDirectory()) await walk(p);
        else {
          const m = /^\.tmp-(\d+)-/.exec(e.name);
          if (m && !pidAlive(Number(m[1]))) {
            await rm(p, { force: true });
            removed++;
          }
        }
      }
    };
    await walk(this.dir);
    return removed;
  }

  /** The cached body for a URL, verified, with its facts. */
  async lookup(url: string): Promise<{ facts: ResponseFacts; body: Buffer } | undefined> {
    const facts = await this.getRef(url);
    if (!facts) return undefined;
    const body = await this.getBody(facts.sha256);
    return body ? { facts, body } : undefined;
  }
}

function pidAlive(pid: number): boolean {
  if (pid === process.pid) return true;
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return (err as NodeJS.ErrnoException).code === 'EPERM';
  }
}
