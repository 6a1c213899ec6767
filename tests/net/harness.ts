import nock from 'nock';
import { afterAll, afterEach, beforeAll, beforeEach } from 'vitest';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { ContentCache } from '../../src/net/cache.ts';
import { Fetcher, FetcherOptions, FetchEvent } from '../../src/net/fetcher.ts';

/** A fake clock: sleep advances time at once and records what was asked. */
export function fakeClock(start = Date.UTC(2026, 0, 1)) {
  const clock = { t: start, sleeps: [] as number[] };
  return {
    clock,
    now: () => clock.t,
    sleep: async (ms: number) => {
      clock.sleeps.push(ms);
      clock.t += ms;
      await new Promise((r) => setImmediate(r));
    },
  };
}

export async function tempDir(prefix = 'swatchbook-test-'): Promise<{ dir: string; cleanup: () => Promise<void> }> {
  const dir = await mkdtemp(join(tmpdir(), prefix));
  return { dir, cleanup: () => rm(dir, { recursive: true, force: true }) };
}

/** A fetcher on a fresh cache with a fake clock; events and warnings are recorded. */
export function makeFetcher(cacheDir: string, overrides: Partial<FetcherOptions> = {}) {
  const fc = fakeClock();
  const events: FetchEvent[] = [];
  const warnings: string[] = [];
  const fetcher = new Fetcher({
    cache: new ContentCache(cacheDir),
    mode: 'online',
    contact: 'mailto:datasets@example.org',
    now: fc.now,
    sleep: fc.sleep,
    warn: (m) => warnings.push(m),
    onEvent: (e) => events.push(e),
    ...overrides,
  });
  return { fetcher, events, warnings, clock: fc.clock };
}

/** Smallest valid images, for bodies that must sniff as images. */
export const PNG_1x1 = Buffer.from('89504e470d0a1a0a0000000d4948445200000001000000010806000000', 'hex');
export const JPEG_HEAD = Buffer.from('ffd8ffe000104a46494600010100000100010000', 'hex');

/**
 * Registers the usual hooks of a nock test file: real connections disabled,
 * a fresh temporary folder per test, interceptors and folder cleaned after it.
 */
export function nockSandbox(): { readonly dir: string } {
  let dir = '';
  let cleanup = async () => {};
  beforeAll(() => nock.disableNetConnect());
  afterAll(() => nock.enableNetConnect());
  beforeEach(async () => ({ dir, cleanup } = await tempDir()));
  afterEach(async () => {
    nock.cleanAll();
    await cleanup();
  });
  return {
    get dir() {
      return dir;
    },
  };
}
