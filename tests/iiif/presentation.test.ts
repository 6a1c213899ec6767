import { describe, expect, it } from 'vitest';
import { parseCollection, parseManifest } from '../../src/iiif/presentation.ts';
import { InputError } from '../../src/errors.ts';
import { fixture, thrown } from '../helpers.ts';

const SRC = 'https://iiif.example.org/manifests/board-halves';

describe('Presentation 3.0 manifest', () => {
  const m = parseManifest(fixture('manifests/board-halves.json'), SRC);

  it('reads label, rights, required statement and provider (Presentation 3.0 §3.1, §4.4)', () => {
    expect(m.label).toBe('Sample board, two halves');
    expect(m.provenance).toEqual({
      rights: 'http://creativecommons.org/licenses/by/4.0/',
      requiredStatement: { label: 'Attribution', value: 'Example Workshop Archive' }, // minimal HTML stripped (§4.5)
      provider: ['Example Workshop Archive'],
    });
  });

  it('paints a whole canvas with an image twice its size', () => {
    const c = m.canvases[0];
    expect([c.width, c.height]).toEqual([1000, 750]);
    expect(c.images).toHaveLength(1);
    expect(c.images[0].target).toEqual({ x: 0, y: 0, w: 1000, h: 750 });
    expect(c.images[0].targetIsWholeCanvas).toBe(true);
    expect(c.images[0].services).toEqual([{ id: 'https://iiif.example.org/iiif/3/board-a', version: 3, level: 2 }]);
  });

  it('paints onto the right half with #xywh and takes the first Choice item (Presentation 3.0 §5.3; Web Annotation §3.2.7)', () => {
    const img = m.canvases[1].images[0];
    expect(img.target).toEqual({ x: 1000, y: 0, w: 1000, h: 1000 });
    expect(img.targetIsWholeCanvas).toBe(false);
    expect(img.choice).toEqual({ chosen: img.bodyId, of: 2 });
    expect(img.services[0]).toEqual({ id: 'https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif', version: 2, level: 1 });
    expect(m.canvases[1].annotationPages).toEqual([{ id: 'https://iiif.example.org/annotations/halves-tags', pointer: '/items/1/annotations/0' }]);
  });

  it('reads a SpecificResource body with an ImageApiSelector region (cookbook recipe 0299 numbers)', () => {
    const img = m.canvases[2].images[0];
    expect(img.selectorRegion).toEqual({ x: 1768, y: 2423, w: 1768, h: 2080 });
    expect(img.services[0].version).toBe(2); // recognised by @context only (services annex §3.1)
    expect([img.bodyWidth, img.bodyHeight]).toEqual([3536, 4999]);
  });
});

describe('Presentation 3.0 collection', () => {
  it('lists referenced manifests and embedded or referenced collections (Presentation 3.0 §5.1)', () => {
    const c = parseCollection(fixture('manifests/collection-nested.json'), 'https://iiif.example.org/collections/top');
    expect(c.members.map((x) => [x.kind, x.id, x.embedded !== undefined])).toEqual([
      ['manifest', 'https://iiif.example.org/manifests/board-halves', false],
      ['collection', 'https://iiif.example.org/collections/marble', true],
      ['collection', 'https://iiif.example.org/collections/gilding', false],
    ]);
  });
});

describe('malformed manifests name their JSON location', () => {
  const good = () => fixture('manifests/board-halves.json') as any;
  const cases: [string, (m: any) => unknown, string, string][] = [
    ['missing canvas width', (m) => { delete m.items[0].width; return m; }, '/items/0/width', 'expected a positive integer, got nothing'],
    ['height as a string', (m) => { m.items[1].height = '1000'; return m; }, '/items/1/height', 'expected a positive integer, got "1000"'],
    ['empty items', (m) => { m.items = []; return m; }, '/items', 'expected a non-empty array'],
    ['wrong type', (m) => { m.type = 'Canvas'; return m; }, '/type', 'expected "Manifest"'],
    ['body without id', (m) => { delete m.items[0].items[0].items[0].body.id; return m; }, '/items/0/items/0/items/0/body/id', 'expected an id'],
    ['painting target on another canvas', (m) => { m.items[0].items[0].items[0].target = 'https://elsewhere.example/c'; return m; }, '/items/0/items/0/items/0/target', 'not its canvas'],
    ['painting target outside the canvas', (m) => { m.items[1].items[0].items[0].target = 'https://iiif.example.org/canvas/halves#xywh=1500,0,1000,1000'; return m; }, '/items/1/items/0/items/0/target', 'outside the 2000×1000 canvas'],
    ['canvas id with a fragment', (m) => { m.items[0].id += '#x'; return m; }, '/items/0/id', 'without a fragment'],
    ['Presentation 2 context', (m) => { m['@context'] = 'http://iiif.io/api/presentation/2/context.json'; return m; }, '/@context', 'Presentation 2'],
    ['label of the wrong type', (m) => { m.label = 42; return m; }, '/label', 'expected a language map'],
  ];
  it.each(cases)('%s', (_name, mutate, pointer, detail) => {
    const err = thrown(() => parseManifest(mutate(good()), SRC));
    expect(err).toBeInstanceOf(InputError);
    expect(err.code).toBe('E_MANIFEST_INVALID');
    expect(err.exitCode).toBe(2);
    expect(err.message).toBe(`${SRC} at ${pointer}: ${(err as unknown as InputError).detail}`);
    expect(err.message).toContain(detail);
  });
  it('a document that is not an object', () => {
    expect(thrown(() => parseManifest([1, 2], SRC)).message).toBe(`${SRC} at /: expected an object, got an array of 2`);
  });
});
