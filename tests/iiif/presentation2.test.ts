import { describe, expect, it } from 'vitest';
import { readCollection2, readManifest2 } from '../../src/iiif/presentation2.ts';
import { familyOf } from '../../src/sources/readers.ts';
import { parseInfoJson, readServiceRef } from '../../src/iiif/image-service.ts';
import { imageRequestUrl, encodeIdentifier } from '../../src/iiif/image-url.ts';
import { tilesCovering } from '../../src/plan/level0.ts';
import { canvasToImage } from '../../src/geometry/placement.ts';
import { planCrop } from '../../src/plan/plan-crop.ts';
import { JsonView } from '../../src/iiif/json-view.ts';

// Check values C1–C25 are from ../shared/iiif-p2-facts.md ("Check values"); the section cited beside each
// check is the one the facts file gives as its source. All documents here are written for the test.

const P2 = 'http://iiif.io/api/presentation/2/context.json';
const image = (service: Record<string, unknown>, size = { width: 1500, height: 2000 }) => ({ '@id': 'http://example.org/iiif/book1/res/page1.jpg', '@type': 'dctypes:Image', ...size, service });
const canvas = (n: number, res: unknown, extra: Record<string, unknown> = {}) => ({
  '@id': `http://example.org/iiif/book1/canvas/p${n}`, '@type': 'sc:Canvas', label: `p. ${n}`, width: 750, height: 1000,
  images: [{ '@type': 'oa:Annotation', motivation: 'sc:painting', on: `http://example.org/iiif/book1/canvas/p${n}`, resource: res }],
  ...extra,
});
const manifest = (canvases: unknown[], extra: Record<string, unknown> = {}) => ({
  '@context': P2, '@id': 'http://example.org/iiif/book1/manifest', '@type': 'sc:Manifest', label: 'Book 1',
  sequences: [{ '@type': 'sc:Sequence', canvases }], ...extra,
});
const v2service = { '@context': 'http://iiif.io/api/image/2/context.json', '@id': 'http://example.org/images/book1-page1', profile: 'http://iiif.io/api/image/2/level1.json' };

describe('Presentation 2.x manifests', () => {
  it('C23: label, attribution, license, within and logo map as the upgrade mapping says', () => {
    // P3 change log §1.2.3/§1.2.5/§1.2.10/§1.3.3; P2.1 §5.1 example
    const { value: m, problems } = readManifest2(manifest([canvas(1, image(v2service))], {
      attribution: 'Provided by Example Organization', license: 'http://rightsstatements.org/vocab/NoC-NC/1.0/',
      within: 'http://example.org/collections/books/', logo: { '@id': 'http://example.org/logos/org.png' },
    }), 'http://example.org/iiif/book1/manifest');
    expect(problems).toEqual([]);
    expect(m.label).toBe('Book 1');
    expect(m.provenance.rights).toBe('http://rightsstatements.org/vocab/NoC-NC/1.0/');
    expect(m.provenance.requiredStatement).toEqual({ label: 'Attribution', value: 'Provided by Example Organization' });
    expect(m.provenance.partOf).toEqual(['http://example.org/collections/books/']);
    expect(m.provenance.logos).toEqual(['http://example.org/logos/org.png']);
  });

  it('C24: a Creative Commons licence given with https becomes the http rights URI', () => {
    // P3 §3.1 rights note; P2.1 Appendix C
    const { value: m } = readManifest2(manifest([canvas(1, image(v2service))], { license: 'https://creativecommons.org/publicdomain/zero/1.0/' }), 'm');
    expect(m.provenance.rights).toBe('http://creativecommons.org/publicdomain/zero/1.0/');
  });

  it('C25/C21: labels as {"@value","@language"} lists pick English; C22: plain string lists', () => {
    // P2.1 §4.3; fixture 62, fixture 3, fixture 4
    const { value: m } = readManifest2(manifest([canvas(1, image(v2service))], { label: [{ '@value': '62: quelque titre', '@language': 'fr' }, { '@value': '62: some title', '@language': 'en' }] }), 'm');
    expect(m.label).toBe('62: some title');
    const { value: m2 } = readManifest2(manifest([canvas(1, image(v2service))], { label: ['some date', 'some other date'] }), 'm');
    expect(m2.label).toContain('some date');
  });

  it('reads sequences[0].canvases, painting images with their Image API 2 service, and otherContent as list references', () => {
    // P2.1 §5.1–§5.4 (Appendix C canvas p1: canvas 750×1000, image 1500×2000)
    const { value: m } = readManifest2(manifest([canvas(1, image(v2service), { otherContent: ['http://example.org/iiif/book1/list/p1', { '@id': 'http://example.org/iiif/book1/list/p1b', '@type': 'sc:AnnotationList' }] })]), 'm');
    expect(m.canvases).toHaveLength(1);
    const c = m.canvases[0];
    expect([c.id, c.width, c.height]).toEqual(['http://example.org/iiif/book1/canvas/p1', 750, 1000]);
    expect(c.images[0].services).toEqual([{ id: 'http://example.org/images/book1-page1', version: 2, level: 1 }]);
    expect(c.images[0].target).toEqual({ x: 0, y: 0, w: 750, h: 1000 });
    expect(c.annotationPages.map((p) => p.id)).toEqual(['http://example.org/iiif/book1/list/p1', 'http://example.org/iiif/book1/list/p1b']);
  });

  it('C3: a canvas box on a half-size canvas maps to doubled image pixels and the 2.x URL', () => {
    // P2.1 §5.3 (scale into canvas), Appendix C; Image 2.1 §4.7
    const { value: m } = readManifest2(manifest([canvas(1, image(v2service))]), 'm');
    const img = m.canvases[0].images[0];
    const placement = { target: img.target, source: { x: 0, y: 0, w: img.bodyWidth!, h: img.bodyHeight! }, imageWidth: 1500, imageHeight: 2000 };
    const region = canvasToImage(placement, { x: 100, y: 100, w: 300, h: 50 });
    expect(region).toEqual({ x: 200, y: 200, w: 600, h: 100 });
    expect(imageRequestUrl('http://example.org/images/book1-page1', 2, { region, size: { kind: 'max' }, quality: 'default', format: 'jpg' }))
      .toBe('http://example.org/images/book1-page1/200,200,600,100/full/0/default.jpg');
  });

  it('C4: an ImageApiSelector region on an oa:SpecificResource body offsets the crop', () => {
    // fixture 36: canvas 1000×1600 painted by region 100,100,1000,1600 of a 1200×1800 image
    const res = { '@type': 'oa:SpecificResource', full: image(v2service, { width: 1200, height: 1800 }), selector: { '@context': 'http://iiif.io/api/annex/openannotation/context.json', '@type': 'iiif:ImageApiSelector', region: '100,100,1000,1600' } };
    const { value: m, problems } = readManifest2(manifest([{ ...canvas(1, res), width: 1000, height: 1600 }]), 'm');
    expect(problems).toEqual([]);
    const img = m.canvases[0].images[0];
    expect(img.selectorRegion).toEqual({ x: 100, y: 100, w: 1000, h: 1600 });
    expect(canvasToImage({ target: img.target, source: img.selectorRegion!, imageWidth: 1200, imageHeight: 1800 }, { x: 10, y: 10, w: 100, h: 100 })).toEqual({ x: 110, y: 110, w: 100, h: 100 });
  });

  it('C5: a rotated painting (ImageApiSelector rotation 180) is read with its rotation, never silently dropped', () => {
    // fixture 41; Open Annotation extensions annex §2.1
    const res = { '@type': 'oa:SpecificResource', full: image(v2service, { width: 1200, height: 1800 }), selector: { '@type': 'iiif:ImageApiSelector', rotation: '180' } };
    const { value: m } = readManifest2(manifest([{ ...canvas(1, res), width: 1200, height: 1800 }]), 'm');
    expect(m.canvases[0].images[0].rotation).toEqual({ degrees: 180, mirrored: false });
  });

  it('C8: an oa:Choice uses its default and counts the options, skipping rdf:nil', () => {
    // fixture 34; P2.1 §6.3
    const res = { '@type': 'oa:Choice', default: image(v2service), item: [{ ...image(v2service), '@id': 'http://example.org/iiif/book1/res/page1-gray.jpg' }, 'rdf:nil'] };
    const { value: m } = readManifest2(manifest([canvas(1, res)]), 'm');
    expect(m.canvases[0].images[0].bodyId).toBe('http://example.org/iiif/book1/res/page1.jpg');
    expect(m.canvases[0].images[0].choice).toEqual({ chosen: 'http://example.org/iiif/book1/res/page1.jpg', of: 2 });
  });

  it('trims stray white space in service contexts and ids, and a trailing slash (OBSERVED quirks, facts A.3)', () => {
    const svc = { '@context': ' http://iiif.io/api/image/2/context.json', '@id': ' https://example.org/iiif/x/', profile: 'http://library.stanford.edu/iiif/image-api/compliance.html#level1' };
    const { value: m } = readManifest2(manifest([canvas(1, image(svc))]), 'm');
    expect(m.canvases[0].images[0].services).toEqual([{ id: 'https://example.org/iiif/x', version: 2, level: 1 }]);
  });

  it('one broken canvas is a problem with its pointer; the other canvases are read', () => {
    const broken = { ...canvas(2, image(v2service)), width: 'wide' };
    const { value: m, problems } = readManifest2(manifest([canvas(1, image(v2service)), broken]), 'http://example.org/iiif/book1/manifest');
    expect(m.canvases.map((c) => c.id)).toEqual(['http://example.org/iiif/book1/canvas/p1']);
    expect(problems.map((p) => p.pointer)).toEqual(['/sequences/0/canvases/1/width']);
  });

  it('the 1.0 context and sc: types are recognised as the older family', () => {
    // facts A.1: Presentation 1.0 used http://www.shared-canvas.org/ns/context.json with the same keys
    expect(familyOf({ ...manifest([]), '@context': 'http://www.shared-canvas.org/ns/context.json' })).toBe('presentation2');
    expect(familyOf({ '@type': 'sc:Collection' })).toBe('presentation2');
    expect(familyOf({ '@context': 'http://iiif.io/api/presentation/3/context.json', type: 'Manifest' })).toBe('presentation3');
    expect(familyOf({ '@type': 'sc:AnnotationList', resources: [] })).toBe('presentation2');
  });
});

describe('Presentation 2.x collections', () => {
  it('members win over collections and manifests; otherwise collections come first (P2.1 §5.8; upgrader D.2)', () => {
    const base = { '@context': P2, '@id': 'http://example.org/collection/top', '@type': 'sc:Collection', label: 'Top' };
    const lists = readCollection2({ ...base, manifests: [{ '@id': 'http://example.org/m1', '@type': 'sc:Manifest', label: 'm1' }], collections: [{ '@id': 'http://example.org/collection/sub', '@type': 'sc:Collection', label: 'sub' }] }, 'c').value;
    expect(lists.members.map((m) => [m.kind, m.id])).toEqual([['collection', 'http://example.org/collection/sub'], ['manifest', 'http://example.org/m1']]);
    const members = readCollection2({ ...base, members: [{ '@id': 'http://example.org/m2', '@type': 'sc:Manifest', label: 'm2' }], manifests: [{ '@id': 'http://example.org/m1', '@type': 'sc:Manifest', label: 'm1' }] }, 'c').value;
    expect(members.members.map((m) => m.id)).toEqual(['http://example.org/m2']);
  });
});

describe('Image API 1.x and 2.0 services', () => {
  // Image API 1.1 §5 example info.json (6000×4000, 1024 tiles, scale_factors 1,2,4)
  const v11 = parseInfoJson({
    '@context': 'http://library.stanford.edu/iiif/image-api/1.1/context.json', '@id': 'http://www.example.org/image-service/abcd1234',
    width: 6000, height: 4000, scale_factors: [1, 2, 4], tile_width: 1024, tile_height: 1024, formats: ['jpg', 'png'], qualities: ['native', 'grey'],
    profile: 'http://library.stanford.edu/iiif/image-api/1.1/compliance.html#level1',
  }, 'http://www.example.org/image-service/abcd1234/info.json');

  it('reads 1.1 info.json fields: scale_factors, tile_width/tile_height, native quality', () => {
    expect([v11.version, v11.level, v11.width, v11.height]).toEqual([1, 1, 6000, 4000]);
    expect(v11.tiles).toEqual([{ width: 1024, height: 1024, scaleFactors: [1, 2, 4] }]);
    expect(v11.qualities).toContain('native');
  });

  it('C14/C15: 1.1 tile URLs at s=4 (col 1, row 0) and s=1 (col 5, row 3)', () => {
    // Image 1.1 §5 example + Image 2.x Appendix A algorithm (DERIVED in the facts file)
    const I = 'http://www.example.org/image-service/abcd1234';
    const at4 = tilesCovering(v11, v11.tiles[0], 4, { x: 4096, y: 0, w: 1, h: 1 });
    expect(at4.map((t) => t.url)).toEqual([`${I}/4096,0,1904,4000/476,/0/native.jpg`]);
    const at1 = tilesCovering(v11, v11.tiles[0], 1, { x: 5120, y: 3072, w: 1, h: 1 });
    expect(at1.map((t) => t.url)).toEqual([`${I}/5120,3072,880,928/880,/0/native.jpg`]);
  });

  it('C16: P2.1 Appendix C service, tile (0,0) at s=16 is the canonical full request; tile (1,1) at s=8', () => {
    // P2.1 Appendix C; Image 2.1 Appendix A, §4.7
    const svc = parseInfoJson({ '@context': 'http://iiif.io/api/image/2/context.json', '@id': 'http://example.org/images/book1-page2', protocol: 'http://iiif.io/api/image', width: 6000, height: 8000, tiles: [{ width: 512, scaleFactors: [1, 2, 4, 8, 16] }], profile: 'http://iiif.io/api/image/2/level0.json' }, 'http://example.org/images/book1-page2/info.json');
    expect(tilesCovering(svc, svc.tiles[0], 16, { x: 0, y: 0, w: 1, h: 1 })[0].url).toBe('http://example.org/images/book1-page2/full/375,/0/default.jpg');
    expect(tilesCovering(svc, svc.tiles[0], 8, { x: 4096, y: 4096, w: 1, h: 1 })[0].url).toBe('http://example.org/images/book1-page2/4096,4096,1904,3904/238,/0/default.jpg');
  });

  it('C17: "the whole image, unscaled" per version', () => {
    // Image 1.1 §2.1; 2.0 §4.2/§4.4; 2.1 §4.7; 3.0 §4.2
    const whole = (v: 1 | 2 | 3, q: string) => imageRequestUrl('B', v, { region: 'full', size: { kind: 'max' }, quality: q, format: 'jpg' });
    expect(whole(1, 'native')).toBe('B/full/full/0/native.jpg');
    expect(whole(2, 'default')).toBe('B/full/full/0/default.jpg');
    expect(whole(3, 'default')).toBe('B/full/max/0/default.jpg');
  });

  it('C18: an ark identifier is encoded as the 1.1 table shows', () => {
    // Image 1.1 §9
    expect(encodeIdentifier('ark:/12025/654xz321')).toBe('ark:%2F12025%2F654xz321');
  });

  it('C19/C20: compliance URIs of each version, including the variants real manifests carry', () => {
    // Image 1.1 §8; Image 2.0 compliance; OBSERVED variants (facts C19, C20)
    const ref = (o: Record<string, unknown>) => readServiceRef(new JsonView(o, 's', 'E_MANIFEST_INVALID'));
    expect(ref({ '@id': 'http://a/1', profile: 'http://library.stanford.edu/iiif/image-api/1.1/compliance.html#level1' })).toEqual({ id: 'http://a/1', version: 1, level: 1 });
    expect(ref({ '@id': 'http://a/2', profile: 'http://iiif.io/api/image/2/level1.json' })).toEqual({ id: 'http://a/2', version: 2, level: 1 });
    expect(ref({ '@id': 'http://a/3', profile: 'http://library.stanford.edu/iiif/image-api/1.1/conformance.html#level1' })).toEqual({ id: 'http://a/3', version: 1, level: 1 });
    const c20 = ref({ '@context': 'http://iiif.io/api/image/1/context.json', '@id': 'http://scale.example.edu/iiif/5fd274ff-0b1c-47f5-af2a-c0f26a468016/', profile: 'http://library.stanford.edu/iiif/image-api/1.1/conformance.html#level1' });
    expect(c20).toEqual({ id: 'http://scale.example.edu/iiif/5fd274ff-0b1c-47f5-af2a-c0f26a468016', version: 1, level: 1 });
  });

  it('a level-1 1.1 service is asked for native quality at the exact size, in 1.1 syntax', () => {
    // Image 1.1 §4.4 (native), §4.2 (size w,h)
    const svc = parseInfoJson({ '@context': 'http://library.stanford.edu/iiif/image-api/1.1/context.json', '@id': 'http://example.org/v11/board', width: 1200, height: 800, profile: 'http://library.stanford.edu/iiif/image-api/1.1/compliance.html#level2' }, 'http://example.org/v11/board/info.json');
    const crop = planCrop({ service: svc, placement: { target: { x: 0, y: 0, w: 1200, h: 800 }, source: { x: 0, y: 0, w: 1200, h: 800 }, imageWidth: 1200, imageHeight: 800 }, scale: 0.5, canvasRect: { x: 100, y: 100, w: 200, h: 100 }, format: 'jpg' });
    expect(crop.stitch.pieces.map((p) => p.url)).toEqual(['http://example.org/v11/board/100,100,200,100/100,50/0/native.jpg']);
  });
});
