import { describe, expect, it } from 'vitest';
import { normaliseRecipe } from '../../src/recipe/load.ts';
import { InputError } from '../../src/errors.ts';
import { thrown } from '../helpers.ts';

const good = () => ({
  name: 'boards',
  sources: [{ manifest: 'manifests/board.json' }, { collection: 'https://iiif.example.org/c' }],
  labels: { graining: ['faux oak'], marbling: ['faux marble'] },
  scale: { pixelsPerCanvasUnit: 0.5 },
});

describe('recipe defaults and paths', () => {
  it('fills every default and resolves relative paths against the recipe folder', () => {
    const r = normaliseRecipe(good(), '/work/r/recipe.json', '/work/r');
    expect(r.sources[0]).toEqual({ kind: 'manifest', location: '/work/r/manifests/board.json' });
    expect(r.sources[1]).toEqual({ kind: 'collection', location: 'https://iiif.example.org/c' });
    expect(r.patch).toEqual({ size: 128, stride: 128, minCoverage: 0.9 });
    expect(r.negatives).toEqual({ ratio: 1, margin: 16, label: 'background' });
    expect(r.split).toEqual({ fractions: { train: 0.8, val: 0.1, test: 0.1 }, groupBy: 'canvas' });
    expect(r.network).toMatchObject({ concurrency: 4, perHost: 2, perHostRate: 4, retries: 4 });
    expect(r.seed).toBe('swatchbook');
    expect(r.output).toBe('/work/r/boards-dataset');
  });
});

describe('broken recipes: one clear message with the JSON location', () => {
  const cases: [string, (r: any) => unknown, string, RegExp][] = [
    ['unknown top-level key', (r) => ({ ...r, colour: 1 }), '/colour', /unknown key "colour"/],
    ['unknown nested key', (r) => ({ ...r, patch: { size: 64, sizee: 2 } }), '/patch/sizee', /unknown key "sizee"/],
    ['wrong type', (r) => ({ ...r, patch: { size: '64' } }), '/patch/size', /expected integer, got "64"/],
    ['patch size 0', (r) => ({ ...r, patch: { size: 0 } }), '/patch/size', /expected a number >= 1, got 0/],
    ['stride larger than 4 × size', (r) => ({ ...r, patch: { size: 32, stride: 200 } }), '/patch/stride', /larger than 4 × size/],
    ['fractions not summing to 1', (r) => ({ ...r, split: { fractions: { train: 0.8, val: 0.2, test: 0.1 } } }), '/split/fractions', /must be 1, got 1.1/],
    ['unknown groupBy', (r) => ({ ...r, split: { groupBy: 'page' } }), '/split/groupBy', /expected one of "manifest", "canvas", "annotation"/],
    ['source of no known kind', (r) => ({ ...r, sources: [{ url: 'x' }] }), '/sources/0', /exactly one of "manifest"/],
    ['no sources', (r) => ({ ...r, sources: [] }), '/sources', /expected at least 1 item\(s\), got an array of 0/],
    ['missing scale', (r) => { delete r.scale; return r; }, '/scale', /is required/],
    ['both scales', (r) => ({ ...r, scale: { pixelsPerCanvasUnit: 1, pixelsPerMm: 2 } }), '/scale', /exactly one of "pixelsPerCanvasUnit" or "pixelsPerMm"/],
    ['negative scale', (r) => ({ ...r, scale: { pixelsPerMm: -1 } }), '/scale/pixelsPerMm', /expected a number > 0, got -1/],
    ['label value in two classes', (r) => ({ ...r, labels: { graining: ['oak'], marbling: ['Oak '] } }), '/labels/marbling', /also accepted by class "graining"/],
    ['negatives label is a class', (r) => ({ ...r, labels: { background: ['x'], a: ['y'] } }), '/labels/background', /negatives' label/],
    ['file: source', (r) => ({ ...r, sources: [{ manifest: 'file:///etc/passwd' }] }), '/sources/0/manifest', /only http\(s\) URLs and file paths/],
    ['bad name', (r) => ({ ...r, name: '../escape' }), '/name', /must match pattern/],
    ['not an object', () => [1], '/', /expected object/],
  ];
  it.each(cases)('%s', (_n, mutate, pointer, re) => {
    const err = thrown(() => normaliseRecipe(mutate(good()), '/work/r/recipe.json', '/work/r'));
    expect(err).toBeInstanceOf(InputError);
    expect(err.exitCode).toBe(2);
    expect(err.message.startsWith(`/work/r/recipe.json at ${pointer}: `)).toBe(true);
    expect(err.message).toMatch(re);
  });
});

describe('runtime defaults come only from the schema', () => {
  it('the fetcher, the retry policy and a normalised recipe agree with the schema defaults', async () => {
    const { networkDefaults } = await import('../../src/recipe/schema.ts');
    const { DEFAULT_FETCHER_OPTIONS } = await import('../../src/net/fetcher.ts');
    const { DEFAULT_RETRY_POLICY } = await import('../../src/net/retry-policy.ts');
    const { normaliseRecipe } = await import('../../src/recipe/load.ts');
    const d = networkDefaults();
    expect(d).toEqual({ concurrency: 4, perHost: 2, perHostRate: 4, timeoutMs: 30000, retries: 4 });
    expect(DEFAULT_FETCHER_OPTIONS).toMatchObject({ concurrency: d.concurrency, perHost: d.perHost, perHostRate: d.perHostRate, timeoutMs: d.timeoutMs });
    expect(DEFAULT_RETRY_POLICY.retries).toBe(d.retries);
    const r = normaliseRecipe({ name: 'd', sources: [{ manifest: 'm' }], labels: { a: [] }, scale: { pixelsPerCanvasUnit: 1 } }, '/r/recipe.json', '/r');
    expect(r.network).toMatchObject(d);
  });
});
