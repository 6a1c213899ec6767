import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runDemo } from '../../src/demo/run-demo.ts';
import { hashTree } from '../../src/pipeline.ts';
import { parseIndex } from '../../src/dataset/records.ts';
import { startDemoServer } from '../../src/demo/server.ts';
import { freePort } from '../servers/net-util.ts';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'swatchbook-demo-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});


describe('the demo', () => {
  it('twice on the same port, from scratch: a real dataset, every class in every split, byte-identical', async () => {
    const port = await freePort();
    const a = await runDemo(join(dir, 'a'), port, {});
    const b = await runDemo(join(dir, 'b'), port, {});
    expect(a.build.failures).toBe(0);
    const records = parseIndex(await readFile(join(a.dataset, 'index.jsonl'), 'utf8'));
    expect(records.length).toBeGreaterThan(300);
    const classes = ['background', 'gilding', 'graining', 'marbling'];
    for (const split of ['train', 'val', 'test']) for (const c of classes) expect(records.some((r) => r.split === split && r.label === c), `${c} in ${split}`).toBe(true);
    // all four server flavours contributed, the second archive's Presentation 2.1 manifest among the sources
    expect(new Set(records.map((r) => `${r.service.version}/${r.service.level}`))).toEqual(new Set(['3/2', '2/2', '3/0', '1/1']));
    expect(records.some((r) => r.manifest.endsWith('/p2/manifests/north-cabinet.json') && r.tags.some((t) => t.raw?.startsWith('<p>brush direction')))).toBe(true);
    const card = await readFile(join(a.dataset, 'card.md'), 'utf8');
    expect(card).toContain('## Collection process');
    for (const part of ['Patches per source manifest:', 'Rights of the patches:', 'Regions planned:', 'Negatives: wanted', 'Near-duplicates across groups:', 'Split policy:']) expect(card).toContain(part);
    // Every class's realised share of patches per split within ±0.03 of its target, counted from the index itself.
    const f = { train: 0.7, val: 0.15, test: 0.15 } as const;
    for (const c of classes) {
      const ofClass = records.filter((r) => r.label === c);
      expect(new Set(ofClass.map((r) => r.group)).size, `${c} groups`).toBeGreaterThanOrEqual(20);
      for (const s of ['train', 'val', 'test'] as const) expect(Math.abs(ofClass.filter((r) => r.split === s).length / ofClass.length - f[s]), `${c} in ${s}`).toBeLessThanOrEqual(0.03);
    }
    expect(card).not.toContain('OUTSIDE the bound');
    // near-duplicates exist across boards, and merging kept every pair inside one split
    const cardJson = JSON.parse(await readFile(join(a.dataset, 'card.json'), 'utf8'));
    expect(cardJson.composition.nearDuplicates.pairs).toBeGreaterThan(0);
    const splitOf = new Map(records.map((r) => [r.id, r.split]));
    for (const p of cardJson.composition.nearDuplicates.examples) expect(splitOf.get(p.b)).toBe(splitOf.get(p.a));
    expect(cardJson.composition.nearDuplicates.acrossSplits).toEqual([]);
    expect(card).toContain('Leakage by difference hash: 0 near-duplicate pair(s) in different splits');
    expect(Object.keys(JSON.parse(await readFile(join(a.dataset, 'lock.json'), 'utf8')).entries).length).toBeGreaterThan(100);
    const ha = await hashTree(a.dataset), hb = await hashTree(b.dataset);
    expect([...hb.entries()]).toEqual([...ha.entries()]);
  }, 120_000);

  it('says clearly when its port is taken', async () => {
    const port = await freePort();
    const first = await startDemoServer(dir, new Map(), port);
    try {
      await expect(startDemoServer(dir, new Map(), port)).rejects.toThrow(`port ${port} on 127.0.0.1 is taken; choose another with --port`);
    } finally {
      await first.close();
    }
  });
});
