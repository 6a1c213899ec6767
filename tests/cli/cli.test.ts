import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtemp, rm, writeFile, readdir } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

const BIN = join(process.cwd(), 'bin', 'swatchbook.js');
let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'swatchbook-cli-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

function cli(args: string[], env: Record<string, string> = {}) {
  const r = spawnSync(process.execPath, [BIN, ...args], { encoding: 'utf8', env: { ...process.env, NO_COLOR: '1', ...env }, timeout: 60_000 });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

const good = {
  name: 'cli',
  sources: [{ manifest: 'board.json' }],
  labels: { graining: ['faux oak'] },
  scale: { pixelsPerCanvasUnit: 1 },
};

describe('the command line', () => {
  const broken: [string, unknown, RegExp][] = [
    ['not JSON', '{ "name": ', /recipe\.json at \/: not valid JSON/],
    ['unknown key', { ...good, colour: 'red' }, /at \/colour: unknown key "colour"/],
    ['wrong type', { ...good, patch: { size: 'big' } }, /at \/patch\/size: expected integer, got "big"/],
    ['patch size 0', { ...good, patch: { size: 0 } }, /at \/patch\/size: expected a number >= 1, got 0/],
    ['stride too large', { ...good, patch: { size: 16, stride: 100 } }, /at \/patch\/stride: stride 100 is larger than 4 × size/],
    ['fractions', { ...good, split: { fractions: { train: 0.5, val: 0.1, test: 0.1 } } }, /at \/split\/fractions: train \+ val \+ test must be 1, got 0.7/],
    ['groupBy', { ...good, split: { groupBy: 'room' } }, /at \/split\/groupBy: expected one of "manifest", "canvas", "annotation"/],
    ['missing labels', { ...good, labels: undefined }, /at \/labels: is required/],
    ['empty labels', { ...good, labels: {} }, /at \/labels: expected at least 1 entry/],
    ['source kind', { ...good, sources: [{ page: 'x' }] }, /at \/sources\/0: expected exactly one of "manifest", "collection", "annotations" or "sheet"/],
    ['format', { ...good, request: { format: 'gif' } }, /at \/request\/format: expected one of "jpg", "png"/],
    ['retries', { ...good, network: { retries: -1 } }, /at \/network\/retries: expected a number >= 0, got -1/],
    ['scheme', { ...good, sources: [{ manifest: 'ftp://example.org/m.json' }] }, /at \/sources\/0\/manifest: only http\(s\) URLs and file paths/],
  ];
  it.each(broken)('refuses a broken recipe (%s) with exit code 2 and one message', async (name, content, re) => {
    const file = join(dir, `${name.replace(/\W/g, '-')}`, 'recipe.json');
    await (await import('node:fs/promises')).mkdir(join(dir, name.replace(/\W/g, '-')), { recursive: true });
    await writeFile(file, typeof content === 'string' ? content : JSON.stringify(content));
    const r = cli(['plan', file]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(re);
    expect(r.stderr.trim().split('\n')).toHaveLength(1); // one message, no stack trace
    expect(r.stderr).not.toMatch(/\n\s+at /);
  });

  it('a bad manifest names the file and the JSON location, exit code 2', { timeout: 60_000 }, async () => {
    const sub = join(dir, 'badmanifest');
    await (await import('node:fs/promises')).mkdir(sub, { recursive: true });
    await writeFile(join(sub, 'board.json'), JSON.stringify({ id: 'https://x.example/m', type: 'Manifest', items: [{ id: 'https://x.example/c', type: 'Canvas', width: 10 }] }));
    await writeFile(join(sub, 'recipe.json'), JSON.stringify(good));
    const r = cli(['plan', join(sub, 'recipe.json')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(`swatchbook: ${join(sub, 'board.json')} at /items/0/height: expected a positive integer, got nothing\n`);
    expect(await readdir(sub)).toEqual(['board.json', 'recipe.json']); // nothing half-written
  });

  it('usage errors exit with 2', { timeout: 60_000 }, () => {
    expect(cli(['nonsense']).code).toBe(2);
    expect(cli(['plan']).code).toBe(2);
    expect(cli(['run', join(dir, 'missing.json'), '--offline', '--frozen']).code).toBe(2);
  });

  it('init writes a recipe that validates, and RECIPE.md', { timeout: 60_000 }, async () => {
    const sub = join(dir, 'init');
    const r = cli(['init', sub]);
    expect(r.code).toBe(0);
    expect((await readdir(sub)).sort()).toEqual(['RECIPE.md', 'recipe.json']);
    expect(cli(['init', sub]).code).toBe(2); // refuses to overwrite
    // the starter recipe is valid: plan gets past validation and fails only on the network (offline, nothing cached)
    const plan = cli(['plan', join(sub, 'recipe.json'), '--offline', '--json']);
    expect(plan.code).toBe(1);
    const out = JSON.parse(plan.stdout);
    expect(out.failures[0].reason).toMatch(/not in the cache/);
  });

  it('--version and --help exit 0', { timeout: 60_000 }, () => {
    expect(cli(['--version']).stdout.trim()).toBe('0.1.0');
    expect(cli(['--help']).code).toBe(0);
  });
});
