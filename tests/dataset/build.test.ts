import { describe, expect, it } from 'vitest';
import nock from 'nock';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import sharp from 'sharp';
import { runRecipe, hashTree } from '../../src/pipeline.ts';
import { parseIndex, IndexRecord } from '../../src/dataset/records.ts';
import { intersects } from '../../src/geometry/rect.ts';
import { BASE, scenarioBoards, scenarioRecipe, serveScenario } from './scenario.ts';
import { nockSandbox } from '../net/harness.ts';

const box = nockSandbox();

const readIndex = async (out: string) => parseIndex(await readFile(join(out, 'index.jsonl'), 'utf8'));

describe('building a dataset from nock-served IIIF fixtures', () => {
  it('is byte-identical at concurrency 1 and 8 with shuffled arrival', async () => {
    const boards = scenarioBoards();
    serveScenario(boards, { shuffleSeed: 1 });
    const a = await scenarioRecipe(join(box.dir, 'a'));
    const ra = await runRecipe(a, { concurrency: 1, cacheDir: join(box.dir, 'cache-a') });
    nock.cleanAll();
    serveScenario(boards, { shuffleSeed: 2 });
    const b = await scenarioRecipe(join(box.dir, 'b'));
    const rb = await runRecipe(b, { concurrency: 8, cacheDir: join(box.dir, 'cache-b') });
    expect(ra.build.failures).toBe(0);
    expect(rb.build.failures).toBe(0);
    expect(ra.build.harvest.requests).toBeGreaterThan(20);
    const ha = await hashTree(a.output), hb = await hashTree(b.output);
    expect(ha.size).toBeGreaterThan(40);
    expect([...hb.entries()]).toEqual([...ha.entries()]);
  }, 60_000);

  it('does not depend on where it is written: two output folders, byte-identical datasets', async () => {
    serveScenario(scenarioBoards());
    const recipe = await scenarioRecipe(join(box.dir, 'where'));
    const cacheDir = join(box.dir, 'where-cache');
    await runRecipe({ ...recipe, output: join(box.dir, 'first', 'out') }, { cacheDir });
    await runRecipe({ ...recipe, output: join(box.dir, 'elsewhere', 'deeper', 'dataset-2') }, { cacheDir, mode: 'offline' });
    const a = await hashTree(join(box.dir, 'first', 'out')), b = await hashTree(join(box.dir, 'elsewhere', 'deeper', 'dataset-2'));
    expect(a.size).toBeGreaterThan(20);
    expect([...b.entries()]).toEqual([...a.entries()]);
  }, 60_000);

  it('keeps its promises patch by patch, and the card counts what the index holds', async () => {
    const boards = scenarioBoards();
    serveScenario(boards);
    const recipe = await scenarioRecipe(box.dir);
    const { build, plan } = await runRecipe(recipe, { cacheDir: join(box.dir, 'cache') });
    expect(build.failures).toBe(0);
    const records = await readIndex(recipe.output);
    const regions = plan.regions;
    for (const r of records) {
      if (r.kind === 'positive') expect(r.coverage).toBeGreaterThanOrEqual(0.9);
      else {
        // negatives touch no labelled region, with the margin (4 px at 1 px per canvas unit → 4 units; canvas b2 at 2 px/unit → 2)
        const m = 4 / r.scale.pixelsPerCanvasUnit;
        const grown = { x: r.canvasRegion.x - m, y: r.canvasRegion.y - m, w: r.canvasRegion.w + 2 * m, h: r.canvasRegion.h + 2 * m };
        for (const reg of regions.filter((x) => x.canvasId === r.canvas)) expect(intersects(grown, reg.bounds)).toBe(false);
      }
      const png = await readFile(join(recipe.output, r.file));
      const meta = await sharp(png).metadata();
      expect([meta.width, meta.height]).toEqual([32, 32]);
      expect(r.file).toBe(`patches/${r.split}/${r.label}/${r.id}.png`);
    }
    // card numbers = counts from the index
    const card = JSON.parse(await readFile(join(recipe.output, 'card.json'), 'utf8'));
    expect(card.composition.patches).toBe(records.length);
    for (const split of ['train', 'val', 'test'] as const) {
      for (const cls of card.composition.classes) expect(card.composition.perSplit[split][cls]).toBe(records.filter((x) => x.split === split && x.label === cls).length);
      const listed = (await readFile(join(recipe.output, 'splits', `${split}.txt`), 'utf8')).split('\n').filter(Boolean);
      expect(listed).toEqual(records.filter((x) => x.split === split).map((x) => x.id));
    }
    const negatives = records.filter((x) => x.kind === 'negative').length;
    const positives = records.length - negatives;
    expect(negatives).toBe(Math.round(positives / 3)); // ratio 1 × positives of the average class
  }, 60_000);

  it('a hand-checked patch: every index field', async () => {
    const boards = scenarioBoards();
    serveScenario(boards);
    const recipe = await scenarioRecipe(box.dir, { split: { fractions: { train: 1, val: 0, test: 0 } } });
    await runRecipe(recipe, { cacheDir: join(box.dir, 'cache') });
    const records = await readIndex(recipe.output);
    // Board b1 (v3 level 2), graining rectangle 20,20,120,100 in image px = canvas units; 0.25 mm/px → 4 px/mm gives 1 output px per unit.
    // Grid origins at multiples of 32 inside [20,140)×[20,120): x 32, 64, 96 (96+32=128 ≤ 140), y 32, 64 (64+32=96 ≤ 120).
    const mine = records.filter((r) => r.canvas === `${BASE}/canvas/b1` && r.label === 'graining');
    expect(mine.map((r) => [r.canvasRegion.x, r.canvasRegion.y]).sort()).toEqual([[32, 32], [32, 64], [64, 32], [64, 64], [96, 32], [96, 64]]);
    const r = mine.find((x) => x.canvasRegion.x === 64 && x.canvasRegion.y === 32)!;
    const expected: Partial<IndexRecord> = {
      split: 'train',
      label: 'graining',
      kind: 'positive',
      coverage: 1,
      group: `canvas:${BASE}/canvas/b1`,
      manifest: `${BASE}/manifests/east-cabinet.json`,
      collections: [`${BASE}/collection.json`],
      canvas: `${BASE}/canvas/b1`,
      annotation: `${BASE}/annotations/east-cabinet/b1-1`,
      annotator: 'annotator-a',
      sourceLabel: 'faux oak',
      service: { id: `${BASE}/iiif/3/b1.png`, version: 3, level: 2 },
      requests: [`${BASE}/iiif/3/b1.png/20,20,120,100/120,100/0/default.png`],
      canvasRegion: { x: 64, y: 32, w: 32, h: 32 },
      imageRegion: { x: 64, y: 32, w: 32, h: 32 },
      scale: { pixelsPerCanvasUnit: 1, basis: 'canvas-physdim', mmPerCanvasUnit: 0.25 },
      rights: 'http://creativecommons.org/licenses/by/4.0/',
      requiredStatement: { label: 'Attribution', value: 'Example Workshop Archive, east cabinet (invented)' },
      provider: ['Example Workshop Archive (invented)'],
    };
    expect(r).toMatchObject(expected);
    expect(r.file).toBe(`patches/train/graining/${r.id}.png`);
    const png = await readFile(join(recipe.output, r.file));
    const { createHash } = await import('node:crypto');
    expect(r.sha256).toBe(createHash('sha256').update(png).digest('hex'));
    expect(r.phash).toMatch(/^[0-9a-f]{16}$/);
    expect(r.responses[0].url).toBe(r.requests[0]);
  }, 60_000);

  it('near-duplicates served by two archives land in one split', async () => {
    const boards = scenarioBoards();
    serveScenario(boards);
    const recipe = await scenarioRecipe(box.dir);
    const { build } = await runRecipe(recipe, { cacheDir: join(box.dir, 'cache') });
    expect(build.nearDuplicatePairs).toBeGreaterThan(0);
    const records = await readIndex(recipe.output);
    const b1 = records.filter((r) => r.canvas === `${BASE}/canvas/b1`);
    const b7 = records.filter((r) => r.canvas === `${BASE}/canvas/b7`);
    expect(b7.length).toBeGreaterThan(0);
    expect(new Set([...b1, ...b7].map((r) => r.split)).size).toBe(1);
    expect(new Set([...b1, ...b7].map((r) => r.group)).size).toBe(1);
  }, 60_000);

  it('--keep-splits: groups of a previous index keep their split, even under another seed; the card counts them', async () => {
    serveScenario(scenarioBoards());
    const east = await scenarioRecipe(join(box.dir, 'keep-one'), {}, [{ manifest: `${BASE}/manifests/east-cabinet.json` }]);
    await runRecipe(east, { cacheDir: join(box.dir, 'cache') });
    const first = await readIndex(east.output);
    const groupSplit = new Map(first.map((r) => [r.group, r.split]));
    // another seed would send groups elsewhere; the previous index pins them
    const both = await scenarioRecipe(join(box.dir, 'keep-two'), { seed: 'another-seed' }, [{ manifest: `${BASE}/manifests/east-cabinet.json` }, { manifest: `${BASE}/manifests/west-cabinet.json` }]);
    const unpinned = await runRecipe({ ...both, output: join(box.dir, 'keep-unpinned') }, { cacheDir: join(box.dir, 'cache') });
    expect(unpinned.build.patches).toBeGreaterThan(first.length);
    const moved = (await readIndex(join(box.dir, 'keep-unpinned'))).filter((r) => groupSplit.has(r.group) && groupSplit.get(r.group) !== r.split);
    expect(moved.length).toBeGreaterThan(0); // without pinning, the new seed moves some of them
    await runRecipe(both, { cacheDir: join(box.dir, 'cache'), keepSplits: join(east.output, 'index.jsonl') });
    const second = await readIndex(both.output);
    for (const r of second) if (groupSplit.has(r.group)) expect(r.split, r.group).toBe(groupSplit.get(r.group));
    const card = JSON.parse(await readFile(join(both.output, 'card.json'), 'utf8'));
    const newGroups = new Set(second.map((r) => r.group).filter((g) => !groupSplit.has(g))).size;
    expect(card.composition.splitPolicy.previousIndex).toEqual({ groups: groupSplit.size, kept: groupSplit.size, changed: 0, new: newGroups });
    await expect(runRecipe(both, { cacheDir: join(box.dir, 'cache'), keepSplits: join(box.dir, 'no-such-index.jsonl') })).rejects.toThrow(/no-such-index\.jsonl at \/: cannot read the previous index for --keep-splits/);
  }, 60_000);

  it('adding a source to a recipe moves few existing groups (as the card reports, none from test to train), and a rerun moves none', async () => {
    const boards = scenarioBoards();
    serveScenario(boards);
    const dir = join(box.dir, 'grow');
    const east = await scenarioRecipe(dir, {}, [{ manifest: `${BASE}/manifests/east-cabinet.json` }]);
    await runRecipe(east, { cacheDir: join(box.dir, 'cache') });
    const before = new Map((await readIndex(east.output)).map((r) => [r.group, r.split]));
    const firstCard = JSON.parse(await readFile(join(east.output, 'card.json'), 'utf8'));
    expect(firstCard.composition.splitPolicy.againstLock).toBeNull();
    // The same recipe file, one source more: the lock beside it holds the first build's splits.
    const both = await scenarioRecipe(dir, {}, [{ manifest: `${BASE}/manifests/east-cabinet.json` }, { manifest: `${BASE}/manifests/west-cabinet.json` }]);
    const { build } = await runRecipe(both, { cacheDir: join(box.dir, 'cache') });
    expect(build.failures).toBe(0);
    const after = await readIndex(both.output);
    const afterSplit = new Map(after.map((r) => [r.group, r.split]));
    const moved = [...before].filter(([g, s]) => afterSplit.get(g) !== s);
    expect(moved.filter(([g, s]) => s === 'test' && afterSplit.get(g) === 'train')).toEqual([]);
    expect(before.size).toBeGreaterThanOrEqual(3);
    expect(afterSplit.size).toBeGreaterThan(before.size);
    const card = JSON.parse(await readFile(join(both.output, 'card.json'), 'utf8'));
    expect(card.composition.splitPolicy.againstLock).toMatchObject({ groups: before.size, moved: moved.length, kept: before.size - moved.length, new: afterSplit.size - before.size, gone: 0 });
    // A rerun over the same sources moves nothing and writes the same bytes.
    const tree = await hashTree(both.output);
    await runRecipe(both, { cacheDir: join(box.dir, 'cache') });
    expect(await hashTree(both.output)).toEqual(tree);
  }, 60_000);
});
