import { describe, expect, it } from 'vitest';
import { cp, mkdir, readFile, rm, writeFile } from 'node:fs/promises';
import sharp from 'sharp';
import { join } from 'node:path';
import { probe, ProbePatch, standardiser } from '../../src/probe/probe.ts';
import { describePatch } from '../../src/probe/describe.ts';
import { main } from '../../src/cli/main.ts';
import { runRecipe } from '../../src/pipeline.ts';
import { parseIndex, serialiseIndex } from '../../src/dataset/records.ts';
import { seededUnit } from '../../src/util/hash.ts';
import { materialColour } from '../../src/demo/textures.ts';
import { scenarioBoards, scenarioRecipe, serveScenario } from '../dataset/scenario.ts';
import { nockSandbox } from '../net/harness.ts';

const box = nockSandbox();

function texturePatch(kind: 'graining' | 'marbling' | 'gilding', seed: number, dx: number) {
  const w = 32, data = new Uint8Array(w * w * 3);
  for (let y = 0; y < w; y++) for (let x = 0; x < w; x++) data.set(materialColour(kind, x + dx, y, seed), (y * w + x) * 3);
  return { width: w, height: w, data };
}

describe('the probe (pure)', () => {
  it('standardises on training rows only', () => {
    const z = standardiser([Float64Array.from([1, 5]), Float64Array.from([3, 5])]);
    expect([...z(Float64Array.from([2, 7]))]).toEqual([0, 2]); // mean (2, 5), σ (1, constant → 1)
  });
  it('separates invented textures well above the random baseline, and flags a copied training patch', () => {
    const kinds = ['graining', 'marbling', 'gilding'] as const;
    const patches: ProbePatch[] = [];
    for (const [k, kind] of kinds.entries()) for (let i = 0; i < 24; i++) {
      const split = i < 18 ? 'train' : 'test';
      patches.push({ id: `${kind}-${i}`, split, label: kind, phash: (BigInt(Math.floor(seededUnit('h', k, i) * 2 ** 52)) * 4099n).toString(16).padStart(16, '0').slice(-16), features: describePatch(texturePatch(kind, 7 + k, i * 40)) });
    }
    const clean = probe(patches, { seed: 's', maxHashDistance: 4 });
    const all = clean.retrieval.find((r) => r.descriptor === 'all' && r.direction === 'test→train')!;
    expect(all.overall.queries).toBe(18);
    expect(clean.baselines.random.p1).toBeCloseTo(1 / 3, 6);
    expect(all.overall.p1).toBeGreaterThan(0.8);
    expect(all.overall.map).toBeGreaterThan(clean.baselines.random.map);
    expect(clean.retrieval.some((r) => r.distance === 'chi2' && r.descriptor === 'lbp8')).toBe(true);
    // a training patch copied into test under another id: same pixels, same hash
    const victim = patches.find((p) => p.id === 'marbling-3')!;
    const leaked = probe([...patches, { ...victim, id: 'zz-leaked', split: 'test' }], { seed: 's', maxHashDistance: 4 });
    expect(leaked.leakage.flagged).toContainEqual({ test: 'zz-leaked', train: 'marbling-3', distance: 0, hamming: 0, reason: 'near-duplicate hash' });
    expect(leaked.leakage.flagged.filter((f) => f.test !== 'zz-leaked')).toEqual(clean.leakage.flagged);
  });
});

describe('swatchbook probe <dataset>', () => {
  it('writes probe.json beside the dataset, leaves the dataset untouched, and raises the alarm for a leaked copy', async () => {
    serveScenario(scenarioBoards());
    const recipe = await scenarioRecipe(box.dir);
    await runRecipe(recipe, { cacheDir: join(box.dir, 'cache') });
    const before = await readFile(join(recipe.output, 'index.jsonl'), 'utf8');
    let out = '';
    const io = { stdout: { write: (s: string) => ((out += s), true) } as unknown as NodeJS.WriteStream, stderr: { write: () => true } as unknown as NodeJS.WriteStream };
    expect(await main(['probe', recipe.output, '--json'], io)).toBe(0);
    const report = JSON.parse(out);
    expect(JSON.parse(await readFile(join(`${recipe.output}-probe`, 'probe.json'), 'utf8'))).toEqual(report);
    expect(await readFile(join(recipe.output, 'index.jsonl'), 'utf8')).toBe(before);
    const all = report.retrieval.find((r: { descriptor: string; direction: string }) => r.descriptor === 'all' && r.direction === 'test→train');
    expect(all.overall.p1).toBeGreaterThan(report.baselines.random.p1);
    // a deliberately leaked copy: a training patch copied into test under a new id
    const leakedDir = join(box.dir, 'leaked');
    await cp(recipe.output, leakedDir, { recursive: true });
    const records = parseIndex(before);
    const victim = records.find((r) => r.split === 'train' && r.kind === 'positive')!;
    const copy = { ...victim, id: 'ffffffffffffffff', split: 'test' as const, file: `patches/test/${victim.label}/ffffffffffffffff.png` };
    await cp(join(leakedDir, victim.file), join(leakedDir, copy.file));
    await writeFile(join(leakedDir, 'index.jsonl'), serialiseIndex([...records, copy]));
    out = '';
    expect(await main(['probe', leakedDir, '--json'], io)).toBe(0);
    expect(JSON.parse(out).leakage.flagged).toContainEqual(expect.objectContaining({ test: 'ffffffffffffffff', train: victim.id, hamming: 0 }));
  }, 120_000);

  it('run writes the probe and the report beside the dataset by default; --no-probe and --no-report skip them', async () => {
    serveScenario(scenarioBoards());
    const recipe = await scenarioRecipe(join(box.dir, 'cli'));
    const io = { stdout: { write: () => true } as unknown as NodeJS.WriteStream, stderr: { write: () => true } as unknown as NodeJS.WriteStream };
    let out = '';
    const jsonIo = { ...io, stdout: { write: (s: string) => ((out += s), true) } as unknown as NodeJS.WriteStream };
    expect(await main(['run', recipe.file, '--json'], jsonIo)).toBe(0);
    const summary = JSON.parse(out);
    expect(summary.probe.file).toBe(join(`${recipe.output}-probe`, 'probe.json'));
    expect(summary.probe.separable).toBe(true);
    // the visual report too, beside the dataset (never inside it), with every patch outlined
    expect(summary.report.file).toBe(join(`${recipe.output}-report`, 'index.html'));
    expect(summary.report.footprints).toBe(summary.patches);
    expect(await readFile(summary.report.file, 'utf8')).toContain('<h2 id="maps">Canvas maps</h2>');
    await rm(`${recipe.output}-probe`, { recursive: true });
    await rm(`${recipe.output}-report`, { recursive: true });
    expect(await main(['build', recipe.file, '--no-probe', '--no-report', '--quiet'], io)).toBe(0);
    await expect(readFile(join(`${recipe.output}-probe`, 'probe.json'))).rejects.toThrow();
    await expect(readFile(join(`${recipe.output}-report`, 'index.html'))).rejects.toThrow();
  }, 120_000);

  it('--queries: outside images in class folders, cut at the patch size, retrieve their class; classes the dataset lacks are named', async () => {
    serveScenario(scenarioBoards());
    const recipe = await scenarioRecipe(join(box.dir, 'q'));
    await runRecipe(recipe, { cacheDir: join(box.dir, 'cache') });
    const queries = join(box.dir, 'photos');
    const paint = async (kind: 'graining' | 'marbling' | 'gilding', file: string, seed: number) => {
      const w = 128, h = 96, data = Buffer.alloc(w * h * 3);
      for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) data.set(kind === 'gilding' ? [(x * 7919 + y * 104729 + seed) % 251, (x * 31 + y * 17) % 241, 60] : materialColour(kind, x, y, seed), (y * w + x) * 3);
      await mkdir(join(queries, file.split('/')[0]!), { recursive: true });
      await sharp(data, { raw: { width: w, height: h, channels: 3 } }).png().toFile(join(queries, file));
    };
    await paint('graining', 'graining/oak-photo.png', 901);
    await paint('marbling', 'marbling/marble-photo.png', 902);
    await paint('gilding', 'granite/not-in-the-dataset.png', 903);
    await writeFile(join(queries, 'graining', 'notes.txt'), 'not an image: ignored');
    let out = '';
    const io = { stdout: { write: (s: string) => ((out += s), true) } as unknown as NodeJS.WriteStream, stderr: { write: () => true } as unknown as NodeJS.WriteStream };
    expect(await main(['probe', recipe.output, '--queries', queries, '--json'], io)).toBe(0);
    const q = JSON.parse(out).queries;
    // 128×96 cut at the recipe's 32-px patch size: 4 × 3 = 12 patches per image, 3 images
    expect(q).toMatchObject({ folder: 'photos', patchSize: 32, images: 3, patches: 36, unknownClasses: ['granite'] });
    expect(Object.keys(q.perClass)).toEqual(['graining', 'marbling']);
    expect(q.perClass.graining.queries).toBe(12);
    expect(q.overall.p1).toBeGreaterThan(q.randomBaseline);
    // the user's folder and files: one clear message, exit 2
    let err = '';
    const errIo = { ...io, stderr: { write: (s: string) => ((err += s), true) } as unknown as NodeJS.WriteStream };
    expect(await main(['probe', recipe.output, '--queries', join(box.dir, 'nowhere')], errIo)).toBe(2);
    expect(err).toContain(join(box.dir, 'nowhere'));
    await writeFile(join(queries, 'marbling', 'broken.png'), 'this is not a PNG');
    err = '';
    expect(await main(['probe', recipe.output, '--queries', queries], errIo)).toBe(2);
    expect(err).toContain(join(queries, 'marbling', 'broken.png'));
    expect(err).not.toMatch(/\n\s+at /); // no stack trace
  }, 120_000);
});
