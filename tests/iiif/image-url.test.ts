import { describe, expect, it } from 'vitest';
import { encodeIdentifier, formatRegion, formatSize, imageRequestUrl, infoJsonUrl, serviceBase } from '../../src/iiif/image-url.ts';
import { normaliseServiceId } from '../../src/iiif/image-service.ts';

describe('identifier encoding (Image API 3.0 §9)', () => {
  it('encodes the spec example ark identifier', () => {
    // Image API 3.0 §9 table: ark:/12025/654xz321 → ark:%2F12025%2F654xz321
    expect(`${encodeIdentifier('ark:/12025/654xz321')}/full/max/0/default`).toBe('ark:%2F12025%2F654xz321/full/max/0/default');
  });
  it('leaves a urn with commas alone and double-encodes an existing escape', () => {
    expect(encodeIdentifier('urn:foo:a123,456')).toBe('urn:foo:a123,456'); // Image API 3.0 §9 table
    expect(encodeIdentifier('Mussel%3Cshell')).toBe('Mussel%253Cshell'); // Image API 3.0 §9: %3C becomes %253C
  });
  it('encodes non-ASCII characters and builds a base from prefix and identifier', () => {
    expect(serviceBase('https://iiif.example.org/iiif/3/', 'board é/1')).toBe('https://iiif.example.org/iiif/3/board%20%C3%A9%2F1');
  });
  it('normalises published ids: trailing slashes and unsafe characters, existing escapes kept', () => {
    expect(normaliseServiceId('https://x.example/iiif/a b/')).toBe('https://x.example/iiif/a%20b');
    expect(normaliseServiceId('https://x.example/iiif/a%20b')).toBe('https://x.example/iiif/a%20b');
  });
});

describe('request URLs (Image API 3.0 §4, §4.8; 2.1 §4.7)', () => {
  it('writes the spec example full/max request', () => {
    // Image API 3.0 §2.1 example
    expect(imageRequestUrl('https://example.org/image-service/abcd1234', 3, { region: 'full', size: { kind: 'max' }, quality: 'default', format: 'jpg' }))
      .toBe('https://example.org/image-service/abcd1234/full/max/0/default.jpg');
  });
  it('uses w,h for 3.0 and w, for 2.1 (implementation notes §3, check values 7 and 8)', () => {
    const region = { x: 4096, y: 2048, w: 1904, h: 1952 };
    expect(imageRequestUrl('https://e.org/i', 3, { region, size: { kind: 'wh', width: 476, height: 488 }, quality: 'default', format: 'jpg' }))
      .toBe('https://e.org/i/4096,2048,1904,1952/476,488/0/default.jpg');
    expect(imageRequestUrl('https://e.org/i', 2, { region, size: { kind: 'w', width: 476 }, quality: 'default', format: 'jpg' }))
      .toBe('https://e.org/i/4096,2048,1904,1952/476,/0/default.jpg');
  });
  it('marks upscaling with ^ only in 3.0 (Image API 3.0 §4.2; 2.1 has no caret)', () => {
    expect(formatSize(3, { kind: 'wh', width: 400, height: 300, upscale: true })).toBe('^400,300');
    expect(formatSize(2, { kind: 'wh', width: 400, height: 300, upscale: true })).toBe('400,300');
    expect(formatSize(2, { kind: 'max' })).toBe('full'); // 2.1 §4.2: full is the native size, required at every level
  });
  it('keeps a query-string id: parameters continue the query value', () => {
    const base = 'https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif/';
    expect(imageRequestUrl(base, 2, { region: { x: 0, y: 0, w: 512, h: 512 }, size: { kind: 'w', width: 256 }, quality: 'default', format: 'jpg' }))
      .toBe('https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif/0,0,512,512/256,/0/default.jpg');
    expect(infoJsonUrl(base)).toBe('https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif/info.json');
  });
  it('refuses non-integer or empty regions (Image API 3.0 §4: pixel values are non-negative integers)', () => {
    expect(() => formatRegion({ x: 0.5, y: 0, w: 10, h: 10 })).toThrow(/non-negative integer/);
    expect(() => formatRegion({ x: 0, y: 0, w: 0, h: 10 })).toThrow(/positive/);
  });
});
