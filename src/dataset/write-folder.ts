import { mkdir, mkdtemp, readdir, rename, rm } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';

/**
 * A dataset folder under construction: everything is written below a
 * temporary sibling (`<out>.partial-XXXX`) and renamed into place only when
 * complete, so an interrupted build never leaves a half-written dataset under
 * the real name.
 */
export class FolderTransaction {
  private constructor(readonly out: string, readonly temp: string) {}

  static async begin(out: string): Promise<FolderTransaction> {
    await mkdir(dirname(out), { recursive: true });
    await removeStale(out);
    const temp = await mkdtemp(`${out}.partial-`);
    return new FolderTransaction(out, temp);
  }

  path(rel: string): string {
    return join(this.temp, rel);
  }

  /** Replaces `out` with the finished folder. */
  async commit(): Promise<void> {
    const old = `${this.out}.old-${process.pid}`;
    let moved = false;
    try {
      await rename(this.out, old);
      moved = true;
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'ENOENT') throw err;
    }
    await rename(this.temp, this.out);
    if (moved) await rm(old, { recursive: true, force: true });
  }

  async abort(): Promise<void> {
    await rm(this.temp, { recursive: true, force: true });
  }
}

/** Removes leftovers of interrupted builds of `out` (`.partial-*`, `.old-*`). */
async function removeStale(out: string): Promise<void> {
  const dir = dirname(out), base = basename(out);
  let names: string[];
  try {
    names = await readdir(dir);
  } catch {
    return;
  }
  for (const n of names) {
    if (n.startsWith(`${base}.partial-`) || n.startsWith(`${base}.old-`)) await rm(join(dir, n), { recursive: true, force: true });
  }
}
