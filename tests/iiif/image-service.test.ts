import { describe, expect, it } from 'vitest';
import { canRequestExactSize, canUpscale, detectVersion, parseInfoJson, readServiceRef, withinLimits } from '../../src/iiif/image-service.ts';
import { JsonView } from '../../src/iiif/json-view.ts';
import { InputError } from '../../src/errors.ts';
import { fixture, thrown } from '../helpers.ts';

const V3 = 'https://iiif.example.org/image-service/abcd1234/info.json';

describe('info.json, Image API 3.0', () => {
  const svc = parseInfoJson(fixture('info/v3-spec-example.json'), V3);
  it('reads size, level and limits (Image API 3.0 §5.2 example values)', () => {
    expect(svc.version).toBe(3);
    expect(svc.level).toBe(1);
    expect([svc.width, svc.height]).toEqual([6000, 4000]);
    expect([svc.maxWidth, svc.maxHeight, svc.maxArea]).toEqual([3000, 2000, 4000000]);
    expect(svc.rights).toBe('http://rightsstatements.org/vocab/InC-EDU/1.0/');
  });
  it('defaults a tile height to its width (Image API 3.0 §5.4)', () => {
    expect(svc.tiles).toEqual([
      { width: 512, height: 512, scaleFactors: [1, 2, 4] },
      { width: 1024, height: 2048, scaleFactors: [8, 16] },
    ]);
  });
  it('unions the level profile with extras (Image API 3.0 §5.7, level1.json)', () => {
    expect(svc.formats).toEqual(['gif', 'jpg', 'pdf', 'png']);
    for (const f of ['regionByPx', 'regionSquare', 'sizeByW', 'sizeByH', 'sizeByWh']) expect(svc.features).toContain(f);
    expect(svc.features).not.toContain('regionByPct'); // level 2 only (compliance §3.1)
    expect(canRequestExactSize(svc)).toBe(true);
    expect(canUpscale(svc)).toBe(false); // sizeUpscaling is optional and not listed
  });
  it('derives the request base from the fetched address', () => {
    expect(svc.base).toBe('https://iiif.example.org/image-service/abcd1234');
  });
  it('checks limits independently (Image API 3.0 §5.2)', () => {
    expect(withinLimits(svc, 3000, 1333)).toBe(true);
    expect(withinLimits(svc, 3001, 10)).toBe(false);
    expect(withinLimits(svc, 2500, 2000)).toBe(false); // 5,000,000 > maxArea
  });
  it('uses the info.json address, not a placeholder id, for a static pyramid', () => {
    const s = parseInfoJson(fixture('info/v3-level0-tiles.json'), 'http://127.0.0.1:8184/iiif3/board-07/info.json');
    expect(s.id).toBe('https://example.com/iiif/board-07');
    expect(s.base).toBe('http://127.0.0.1:8184/iiif3/board-07');
    expect(s.level).toBe(0);
    expect(s.features).toEqual([]); // level0.json lists no features
  });
});

describe('info.json, Image API 2.1', () => {
  const url = 'https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif/info.json';
  const svc = parseInfoJson(fixture('info/v2-level1-query-id.json'), url);
  it('reads the profile list: level URI then object (Image API 2.1 §5.2, §5.3)', () => {
    expect(svc.version).toBe(2);
    expect(svc.level).toBe(1);
    expect(svc.formats).toEqual(['jpg']);
    expect(svc.features).toContain('sizeByForcedWh');
    expect(svc.features).toContain('sizeAboveFull');
    expect(canUpscale(svc)).toBe(true);
  });
  it('infers maxHeight from maxWidth (Image API 2.1 §5.3; 3.0 §5.2)', () => {
    expect(svc.maxWidth).toBe(512);
    expect(svc.maxHeight).toBe(512);
  });
  it('keeps a query-string id whole', () => {
    expect(svc.base).toBe('https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif');
    expect(svc.rights).toBe('http://creativecommons.org/licenses/by/4.0/');
    expect(svc.attribution).toBe('Courtesy of the Example Workshop Archive');
  });
  it('accepts profile as a plain string and strips a trailing slash from @id', () => {
    const s = parseInfoJson(fixture('info/v2-level2-plain.json'), 'file:///fixtures/v2-level2-plain.json');
    expect(s.level).toBe(2);
    expect(s.id).toBe('https://iiif.example.org/iiif/2/board-11');
    expect(s.base).toBe('https://iiif.example.org/iiif/2/board-11');
    // Image API 2.1 level2.json: distorting w,h and pct sizes
    expect(s.features).toEqual(expect.arrayContaining(['sizeByDistortedWh', 'sizeByPct', 'regionByPct']));
  });
});

describe('version detection (Presentation 3.0 §3.3.1; Image API 2.1/3.0 §5.2)', () => {
  const v = (doc: unknown) => detectVersion(JsonView.of(doc, 'x', 'E_INFO_INVALID'));
  it.each([
    [{ type: 'ImageService3', profile: 'level1' }, 3],
    [{ '@type': 'ImageService2', profile: 'http://iiif.io/api/image/2/level1.json' }, 2],
    [{ '@context': 'http://iiif.io/api/image/2/context.json', '@id': 'x' }, 2],
    [{ '@context': ['http://example.org/extra.json', 'http://iiif.io/api/image/3/context.json'] }, 3],
    [{ profile: ['http://iiif.io/api/image/2/level0.json'] }, 2],
    [{ profile: 'level2' }, 3],
    [{ '@context': 'http://iiif.io/api/image/1/context.json' }, 1],
    [{ type: 'AuthCookieService1' }, undefined],
  ])('%j → %s', (doc, expected) => expect(v(doc)).toBe(expected));

  it('reads service references with @id/@type or id/type and skips non-image services', () => {
    const ref2 = readServiceRef(JsonView.of({ '@id': 'https://x.example/iiif/a/', '@type': 'ImageService2', profile: 'http://iiif.io/api/image/2/level2.json' }, 's', 'E_MANIFEST_INVALID'));
    expect(ref2).toEqual({ id: 'https://x.example/iiif/a', version: 2, level: 2 });
    const auth = readServiceRef(JsonView.of({ '@id': 'https://x.example/login', '@type': 'AuthCookieService1' }, 's', 'E_MANIFEST_INVALID'));
    expect(auth).toBeUndefined();
  });
});

describe('malformed info.json', () => {
  const base = fixture('info/v3-spec-example.json') as Record<string, unknown>;
  it.each([
    [{ ...base, width: undefined }, '/width', 'expected a positive integer, got nothing'],
    [{ ...base, height: -4 }, '/height', 'expected a positive integer, got -4'],
    [{ ...base, profile: 'level9' }, '/profile', 'expected "level0", "level1" or "level2"'],
    [{ ...base, tiles: [{ width: 512, scaleFactors: [] }] }, '/tiles/0/scaleFactors', 'non-empty array'],
    [{ ...base, maxWidth: undefined, maxHeight: 100 }, '/maxWidth', 'maxWidth must be present'],
    [{ '@context': 'http://example.org/other', id: 'x', width: 1, height: 1 }, '/@context', 'cannot tell the Image API version'],
    ['not an object', '/', 'expected an object'],
  ])('case %#: names the pointer', (doc, pointer, detail) => {
    const err = thrown(() => parseInfoJson(doc, V3));
    expect(err).toBeInstanceOf(InputError);
    expect(err.code).toBe('E_INFO_INVALID');
    expect(err.message).toContain(`${V3} at ${pointer}:`);
    expect(err.message).toContain(detail);
  });
});
