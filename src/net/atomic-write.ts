import { mkdir, open, rename, rm } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { randomBytes } from 'node:crypto';

/**
 * Writes a file so that readers see either the old content or the whole new
 * content, never a part: write to a temporary name in the same folder, then rename.
 * A killed process leaves at most a `.tmp-*` file, never a torn target. With
 * `durable`, the data is also flushed to disk before the rename (survives power
 * loss; costs a disk sync per file, so the cache, which verifies every read, does without).
 */
export async function writeFileAtomic(path: string, data: Uint8Array | string, durable = false): Promise<void> {
  const dir = dirname(path);
  await mkdir(dir, { recursive: true });
  const tmp = join(dir, `.tmp-${process.pid}-${randomBytes(6).toString('hex')}`);
  const fh = await open(tmp, 'w');
  try {
    await fh.writeFile(data);
    if (durable) await fh.sync();
  } finally {
    await fh.close();
  }
  try {
    await rename(tmp, path);
  } catch (err) {
    await rm(tmp, { force: true });
    throw err;
  }
}
