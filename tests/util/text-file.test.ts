import { describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { mapLines, writeTextParts } from '../../src/util/text-file.ts';
import { prettyJsonParts } from '../../src/util/pretty-json.ts';

describe('text written and read in parts', () => {
  it('prettyJsonParts joined is JSON.stringify(value, null, 2), for documents of every shape', () => {
    let seed = 11;
    const rand = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
    const leaf = (): unknown => [() => rand(), () => `s"\n\u00e9${Math.floor(rand() * 99)}`, () => null, () => rand() > 0.5, () => undefined, () => ({}), () => []][Math.floor(rand() * 7)]!();
    const value = (depth: number): unknown =>
      depth === 0 || rand() < 0.3
        ? leaf()
        : rand() < 0.5
          ? Array.from({ length: Math.floor(rand() * 4) }, () => value(depth - 1))
          : Object.fromEntries(Array.from({ length: Math.floor(rand() * 4) }, (_, i) => [`k${i}`, value(depth - 1)]));
    for (let c = 0; c < 300; c++) {
      const doc = Object.fromEntries(Array.from({ length: c % 5 }, (_, i) => [i === 1 ? '@graph' : `key ${i}`, i === 1 ? Array.from({ length: c % 7 }, () => value(3)) : value(3)]));
      expect([...prettyJsonParts(doc)].join(''), `case ${c}`).toBe(JSON.stringify(doc, null, 2));
      // The same document with its graph given as a generator: written as that array, item by item.
      const graph = doc['@graph'];
      if (Array.isArray(graph)) {
        const lazy = { ...doc, '@graph': (function* () { yield* graph; })() };
        expect([...prettyJsonParts(lazy)].join(''), `lazy case ${c}`).toBe(JSON.stringify(doc, null, 2));
      }
    }
  });

  it('writeTextParts writes the parts in order, across many batches, with the sha256 and size of the bytes on disk', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'swatchbook-text-'));
    try {
      // About 3 MB of multi-byte text in 40,000 parts: several 1 MiB batches.
      const parts = Array.from({ length: 40_000 }, (_, i) => `{"n":${i},"t":"bois de noyer é ${'x'.repeat(i % 97)}"}\n`);
      const file = join(dir, 'a.jsonl');
      const written = await writeTextParts(file, parts);
      const bytes = await readFile(file);
      expect(bytes.toString('utf8')).toBe(parts.join(''));
      expect(written.size).toBe(bytes.length);
      expect(written.sha256).toBe(createHash('sha256').update(bytes).digest('hex'));
      const empty = await writeTextParts(join(dir, 'empty.txt'), []);
      expect(empty).toEqual({ size: 0, sha256: 'e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855' }); // sha256 of nothing (FIPS 180-4 test vector)
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });

  it('mapLines reads every non-blank line in order, numbering lines as the file does', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'swatchbook-text-'));
    try {
      await writeFile(join(dir, 'l.jsonl'), 'a\n\nb\r\nc');
      expect(await mapLines(join(dir, 'l.jsonl'), (l, n) => `${n}:${l}`)).toEqual(['0:a', '2:b', '3:c']);
      await expect(mapLines(join(dir, 'missing.jsonl'), (l) => l)).rejects.toMatchObject({ code: 'ENOENT' });
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });
});
