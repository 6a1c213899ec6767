import { mkdir, open, rename, rm, writeFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { randomBytes } from 'node:crypto';

/** Folders this process has made or seen: a cache write then costs no `mkdir` (content-addressed stores write thousands). */
const knownDirs = new Set<string>();

/** Temporary names: this process's id and a random tag drawn once (caches may be shared between machines), then a counter. */
export const processTag = `${process.pid}-${randomBytes(4).toString('hex')}`;
let tmpCount = 0;

/**
 * Writes a file so that readers see either the old content or the whole new
 * content, never a part: write to a temporary name in the same folder, then rename.
 * A killed process leaves at most a `.tmp-*` file, never a torn target. With
 * `durable`, the data is also flushed to disk before the rename (survives power
 * loss; costs a disk sync per file, so the cache, which verifies every read, does without).
 */
export async function writeFileAtomic(path: string, data: Uint8Array | string, durable = false): Promise<void> {
  const dir = dirname(path);
  if (!knownDirs.has(dir)) {
    await mkdir(dir, { recursive: true });
    knownDirs.add(dir);
  }
  const tmp = join(dir, `.tmp-${processTag}-${(tmpCount++).toString(36)}`);
  try {
    if (durable) {
      const fh = await open(tmp, 'w');
      try {
        await fh.writeFile(data);
        await fh.sync();
      } finally {
        await fh.close();
      }
    } else {
      await writeFile(tmp, data);
    }
  } catch (err) {
    // The folder may have been removed under us (a cache cleared while the process runs): make it again once.
    if ((err as NodeJS.ErrnoException).code !== 'ENOENT' || !knownDirs.delete(dir)) throw err;
    return writeFileAtomic(path, data, durable);
  }
  try {
    await rename(tmp, path);
  } catch (err) {
    await rm(tmp, { force: true });
    throw err;
  }
}
