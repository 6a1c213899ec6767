import { describe, expect, it } from 'vitest';
import { existsSync } from 'node:fs';
import { mkdtemp, readdir, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { ExternalSort } from '../../src/util/external-sort.ts';
import { byString } from '../../src/util/hash.ts';

describe('sorting lines in bounded memory', () => {
  it('gives exactly the stable in-memory sort by the same key, across many runs, ties in the order added', async () => {
    const base = await mkdtemp(join(tmpdir(), 'swatchbook-xsort-'));
    try {
      let seed = 7;
      const rand = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
      const words = ['a', 'ab', 'b', 'é', '\u{1F3A8}', 'a\u001fb', 'Z', '', '"q"', 'x\\y'];
      const pick = () => words[Math.floor(rand() * words.length)]!;
      for (const [n, runChars] of [[0, 10], [1, 10], [5000, 2000], [3000, 1 << 30]] as const) {
        const dir = join(base, `s-${n}-${runChars}`);
        const sorter = new ExternalSort(dir, runChars);
        const items = Array.from({ length: n }, (_, i) => ({ key: rand() < 0.5 ? [pick()] : [pick(), pick()], line: `{"i":${i},"t":"${pick().replace(/["\\]/g, '')}\t"}` }));
        for (const it of items) sorter.add(it.key, it.line);
        // The lines went through many run files, merged 16 at a time into longer runs (fewer files left than written).
        if (n === 5000) {
          expect(sorter.runsWritten).toBeGreaterThan(32);
          expect((await readdir(dir)).length).toBeLessThan(sorter.runsWritten / 2);
        }
        const expected = [...items]
          .sort((a, b) => {
            for (let k = 0; k < Math.min(a.key.length, b.key.length); k++) {
              const c = byString(a.key[k]!, b.key[k]!);
              if (c) return c;
            }
            return a.key.length - b.key.length;
          })
          .map((x) => x.line);
        expect([...sorter.sorted()], `n=${n}`).toEqual(expected);
        expect(existsSync(dir)).toBe(false);
      }
      // Repeated keys: the first line added for a key is kept where dropRepeats says so, every line elsewhere.
      const sorter = new ExternalSort(join(base, 'repeats'), 40);
      const lines = ['b 1', 'a 1', 'b 2', 'c 1', 'a 2', 'c 2', 'a 3'];
      for (const l of lines) sorter.add([l[0]!], l);
      expect([...sorter.sorted({ dropRepeats: (key) => key[0] !== 'c' })]).toEqual(['a 1', 'b 1', 'c 1', 'c 2']);
    } finally {
      await rm(base, { recursive: true, force: true });
    }
  });
});
