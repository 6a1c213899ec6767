import { describe, expect, it } from 'vitest';
import nock from 'nock';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { main } from '../../src/cli/main.ts';
import { hashTree } from '../../src/pipeline.ts';
import { BASE, scenarioBoards, scenarioRecipe, serveScenario } from '../dataset/scenario.ts';
import { nockSandbox } from '../net/harness.ts';
import { capture } from '../helpers.ts';

const box = nockSandbox();

describe('plan, harvest, build, --frozen', () => {
  it('plan prints regions per class, requests, estimated bytes and servers with their levels, fetching no image', async () => {
    const served = serveScenario(scenarioBoards());
    const recipe = await scenarioRecipe(box.dir);
    const c = capture();
    expect(await main(['plan', recipe.file, '--json'], c.io), c.err()).toBe(0);
    const plan = JSON.parse(c.out());
    expect(plan.manifests).toBe(3);
    expect(plan.regionsPerClass).toEqual({ gilding: 4, graining: 5, marbling: 5 });
    expect(plan.requests).toBeGreaterThan(10);
    expect(plan.requests).toBeLessThanOrEqual(plan.crops + 20); // level-0 tiles are shared between crops
    expect(plan.estimatedBytes).toBeGreaterThan(0);
    expect(plan.servers.map((s: { version: number; level: number }) => `${s.version}/${s.level}`).sort()).toEqual(['2/2', '2/2', '3/0', '3/2', '3/2', '3/2', '3/2']);
    // info.json was read; no image was requested
    const asked = served.counts.flatMap((m) => [...m.entries()]);
    expect(asked.filter(([path]) => path === 'info.json').length).toBe(7);
    expect(asked.filter(([path]) => path !== 'info.json')).toEqual([]);
  });

  it('harvest then build (offline) equals run; --frozen then passes, and catches a changed body', async () => {
    const boards = scenarioBoards();
    serveScenario(boards);
    const recipe = await scenarioRecipe(join(box.dir, 'a'));
    const h = capture();
    expect(await main(['harvest', recipe.file, '--json'], h.io), h.err()).toBe(0);
    const harvest = JSON.parse(h.out());
    expect(harvest.served).toBe(harvest.crops);
    nock.cleanAll(); // build must not need the network
    const b = capture();
    expect(await main(['build', recipe.file, '--quiet'], b.io), b.err()).toBe(0);
    serveScenario(boards);
    const other = await scenarioRecipe(join(box.dir, 'b'));
    const r = capture();
    expect(await main(['run', other.file, '--quiet'], r.io), r.err()).toBe(0);
    expect([...(await hashTree(recipe.output)).entries()]).toEqual([...(await hashTree(other.output)).entries()]);
    // --frozen with the lock and the cache: fine, no request.
    nock.cleanAll();
    const f = capture();
    expect(await main(['run', recipe.file, '--frozen', '--quiet'], f.io), f.err()).toBe(0);
    // --frozen against a server whose manifest changed, with an empty cache: the changed body is refused, named.
    serveScenario(boards);
    const lockFile = join(box.dir, 'a', 'scenario.lock.json');
    const lock = JSON.parse(await readFile(lockFile, 'utf8'));
    expect(Object.keys(lock.entries)).toContain(`${BASE}/manifests/east-cabinet.json`);
    nock.cleanAll();
    nock(BASE).persist().get(/.*/).reply(200, '{"changed":true}', { 'content-type': 'application/ld+json' });
    const z = capture();
    const code = await main(['run', recipe.file, '--frozen', '--cache', join(box.dir, 'empty-cache'), '--quiet'], z.io);
    expect(code).toBe(1);
    const failures = await readFile(join(recipe.output, 'failures.jsonl'), 'utf8');
    expect(failures).toMatch(/"url":"https:\/\/boards\.example\.org\/collection\.json".*body changed at the source: the lock has sha256 [0-9a-f]{64}, the server sent [0-9a-f]{64}/);
  });
});
