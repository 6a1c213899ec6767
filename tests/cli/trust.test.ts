import { describe, expect, it } from 'vitest';
import nock from 'nock';
import { readFile, writeFile, readdir } from 'node:fs/promises';
import { join } from 'node:path';
import { main } from '../../src/cli/main.ts';
import { hashTree } from '../../src/pipeline.ts';
import { parseIndex } from '../../src/dataset/records.ts';
import { BASE, scenarioBoards, scenarioRecipe, serveScenario } from '../dataset/scenario.ts';
import { nockSandbox } from '../net/harness.ts';
import { capture } from '../helpers.ts';

const box = nockSandbox();


async function built(overrides: Record<string, unknown> = {}) {
  serveScenario(scenarioBoards());
  const recipe = await scenarioRecipe(box.dir, overrides);
  const c = capture();
  const code = await main(['run', recipe.file, '--quiet'], c.io);
  expect(code, c.err()).toBe(0);
  return recipe;
}

describe('trace', () => {
  it('prints the chain from patch file to rights, as text and as JSON', async () => {
    const recipe = await built();
    const records = parseIndex(await readFile(join(recipe.output, 'index.jsonl'), 'utf8'));
    const r = records.find((x) => x.kind === 'positive' && x.service.level === 0)!; // a level-0 patch: several tile requests
    const c = capture();
    expect(await main(['trace', r.id, '--dataset', recipe.output, '--json'], c.io)).toBe(0);
    const chain = JSON.parse(c.out());
    expect(chain.map((l: { step: string }) => l.step)).toEqual(['patch', 'crop', 'image service', 'canvas and annotation', 'manifest and collection', 'rights']);
    expect(chain[0].facts).toMatchObject({ id: r.id, file: r.file, sha256: r.sha256 });
    expect(chain[1].facts.requests.length).toBe(r.requests.length);
    const lock = JSON.parse(await readFile(join(recipe.output, 'lock.json'), 'utf8'));
    for (const q of chain[1].facts.requests) expect(q.sha256).toBe(lock.entries[q.responseUrl].sha256);
    expect(chain[2].facts).toEqual({ id: `${BASE}/static/b2`, imageApi: 3, level: 0 });
    expect(chain[3].facts.annotator).toMatch(/annotator-[ab]/);
    expect(chain[4].facts.collections).toEqual([`${BASE}/collection.json`]);
    expect(chain[5].facts.rights).toBe('http://creativecommons.org/licenses/by/4.0/');
    const text = capture();
    expect(await main(['trace', r.id, '--dataset', recipe.output], text.io)).toBe(0);
    expect(text.out()).toContain('← image service');
    expect(text.out()).toContain(r.sha256);
    const missing = capture();
    expect(await main(['trace', 'nope', '--dataset', recipe.output], missing.io)).toBe(2);
    expect(missing.err()).toMatch(/patch nope is not in .*index\.jsonl/);
  });
});

describe('verify', () => {
  it('proves a rebuilt dataset identical, lists a tampered file, and never touches the dataset', async () => {
    const recipe = await built();
    const ok = capture();
    const okCode = await main(['verify', recipe.file, '--json'], ok.io);
    expect(okCode).toBe(0);
    expect(JSON.parse(ok.out())).toMatchObject({ identical: true, differing: [] });
    const records = parseIndex(await readFile(join(recipe.output, 'index.jsonl'), 'utf8'));
    await writeFile(join(recipe.output, records[0].file), 'tampered');
    const before = await hashTree(recipe.output);
    const bad = capture();
    expect(await main(['verify', recipe.file, '--json'], bad.io)).toBe(1);
    expect(JSON.parse(bad.out()).differing.map((d: { file: string }) => d.file)).toEqual([records[0].file]);
    expect([...(await hashTree(recipe.output)).entries()]).toEqual([...before.entries()]);
    expect((await readdir(box.dir)).filter((n) => n.includes('.verify-'))).toEqual([]);
  });

  it('--refetch reports which sources changed at the server, and leaves the dataset alone', async () => {
    const recipe = await built();
    const before = await hashTree(recipe.output);
    nock.cleanAll();
    // The server now answers: one manifest changed, one image request with other bytes, the rest as before.
    const boards = scenarioBoards();
    const served = serveScenario(boards);
    const lock = JSON.parse(await readFile(join(recipe.output, 'lock.json'), 'utf8'));
    const imageUrl = Object.keys(lock.entries).find((u) => u.includes('/iiif/3/b4.png/') && !u.endsWith('info.json'))!;
    nock.cleanAll();
    const changedManifest = { ...(served.documents.get('manifests/west-cabinet.json') as object), label: { en: ['renamed'] } };
    const docs = new Map(served.documents);
    docs.set('manifests/west-cabinet.json', changedManifest);
    const scope = nock(BASE).persist();
    for (const [path, doc] of docs) scope.get(`/${path}`).reply(200, JSON.stringify(doc), { 'content-type': 'application/ld+json' });
    const path = new URL(imageUrl).pathname;
    nock(BASE).get(path).reply(200, Buffer.from('89504e470d0a1a0a0000', 'hex'), { 'content-type': 'image/png' });
    serveScenario(boards); // everything else as before (documents first match above)
    const c = capture();
    const code = await main(['verify', recipe.file, '--refetch', '--json'], c.io);
    const drift = JSON.parse(c.out());
    expect(code).toBe(1);
    expect(drift.changed.map((x: { url: string; kind: string }) => [x.kind, x.url])).toEqual([
      ['image', imageUrl],
      ['manifest', `${BASE}/manifests/west-cabinet.json`],
    ].sort((a, b) => (a[1] < b[1] ? -1 : 1)));
    expect(drift.checked).toBe(Object.keys(lock.entries).length);
    expect([...(await hashTree(recipe.output)).entries()]).toEqual([...before.entries()]);
  });
});

describe('rights', () => {
  it('excludes sources outside the allow-list, counts them in the card, and attributes the rest', async () => {
    const recipe = await built({ rights: { allow: ['http://creativecommons.org/publicdomain/'] } });
    const card = JSON.parse(await readFile(join(recipe.output, 'card.json'), 'utf8'));
    expect(card.composition.rightsExcluded).toEqual([
      { manifestId: `${BASE}/manifests/east-cabinet.json`, rights: 'http://creativecommons.org/licenses/by/4.0/' },
      { manifestId: `${BASE}/manifests/loan-cabinet.json`, rights: 'http://rightsstatements.org/vocab/InC-EDU/1.0/' },
    ]);
    expect(card.composition.regions.skipped['rights-excluded']).toBeGreaterThan(0);
    const records = parseIndex(await readFile(join(recipe.output, 'index.jsonl'), 'utf8'));
    expect(new Set(records.map((r) => r.rights))).toEqual(new Set(['http://creativecommons.org/publicdomain/zero/1.0/']));
    const attribution = await readFile(join(recipe.output, 'ATTRIBUTION.md'), 'utf8');
    expect(attribution).toContain(`## ${BASE}/manifests/west-cabinet.json`);
    expect(attribution).toContain('Attribution: Example Workshop Archive, west cabinet (invented)');
    expect(attribution).not.toContain('east-cabinet');
  });

  it('keeps credentials in URLs out of the lock, the card, the index and messages', async () => {
    serveScenario(scenarioBoards());
    const secret = BASE.replace('https://', 'https://curator:s3cret@');
    const recipe = await scenarioRecipe(box.dir, {}, [{ manifest: `${secret}/manifests/east-cabinet.json` }]);
    const c = capture();
    expect(await main(['run', recipe.file, '--quiet'], c.io), c.err()).toBe(0);
    for (const f of ['lock.json', 'card.json', 'card.md', 'index.jsonl', 'provenance.jsonld', 'failures.jsonl']) {
      expect(await readFile(join(recipe.output, f), 'utf8'), f).not.toContain('s3cret');
    }
    expect(await readFile(join(box.dir, 'scenario.lock.json'), 'utf8')).not.toContain('s3cret');
  });
});
