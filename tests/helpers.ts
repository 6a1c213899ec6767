import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

export const FIXTURES = join(dirname(fileURLToPath(import.meta.url)), 'fixtures');

export function fixture(rel: string): unknown {
  return JSON.parse(readFileSync(join(FIXTURES, rel), 'utf8'));
}

/** Runs fn and returns what it threw (fails the test when it throws nothing). */
export function thrown(fn: () => unknown): Error & Record<string, unknown> {
  try {
    fn();
  } catch (err) {
    return err as Error & Record<string, unknown>;
  }
  throw new Error('expected an error, none was thrown');
}

/** Streams for the CLI's main() that collect what it writes. */
export function capture() {
  let out = '', err = '';
  return {
    io: {
      stdout: { write: (s: string) => ((out += s), true) } as unknown as NodeJS.WriteStream,
      stderr: { write: (s: string) => ((err += s), true) } as unknown as NodeJS.WriteStream,
    },
    out: () => out,
    err: () => err,
  };
}
