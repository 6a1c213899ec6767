import { describe, expect, it } from 'vitest';
import { parseAnnotationDocument } from '../../src/annotation/web-annotation.ts';
import { CanvasLookup, extractRegions, labelIndex } from '../../src/annotation/regions.ts';
import { parseManifest } from '../../src/iiif/presentation.ts';
import { InputError } from '../../src/errors.ts';
import { fixture, thrown } from '../helpers.ts';

const SRC = 'https://iiif.example.org/annotations/halves-tags';

describe('W3C Web Annotation reading', () => {
  const doc = parseAnnotationDocument(fixture('annotations/halves-tags.json'), SRC);
  const byId = (n: number) => doc.annotations.find((a) => a.id.endsWith(`/${n}`))!;

  it('reads a target IRI with #xywh and a TextualBody with a creator (Web Annotation §3.2.1, §3.2.4)', () => {
    const a = byId(1);
    expect(a.labels).toEqual(['faux oak']);
    expect(a.annotator).toBe('annotator-a');
    expect(a.targets).toEqual([{ canvasId: 'https://iiif.example.org/canvas/halves', selector: { kind: 'xywh', fragment: { unit: 'pixel', x: 1100, y: 100, w: 400, h: 300 } }, pointer: '/items/0/target' }]);
  });
  it('keeps classifying bodies, drops commenting ones, and reads a SpecificResource source (§3.3.5, example 18)', () => {
    expect(byId(2).labels).toEqual(['https://vocab.example.org/material/marbling']);
    const sel = byId(2).targets[0].selector;
    expect(sel.kind).toBe('svg');
  });
  it('reads bodyValue and several targets, FragmentSelector with percent (§3.2.5, §4.2.1)', () => {
    const a = byId(3);
    expect(a.labels).toEqual(['gilding']);
    expect(a.targets.map((t) => t.selector.kind)).toEqual(['xywh', 'xywh']);
  });
  it('recognises a PointSelector (IIIF registry of selectors §2.2)', () => {
    expect(byId(4).targets[0].selector).toEqual({ kind: 'point', x: 1500, y: 500 });
  });
});

describe('regions from annotations', () => {
  const manifest = parseManifest(fixture('manifests/board-halves.json'), 'm.json');
  const canvases = new CanvasLookup(manifest.canvases.map((canvas) => ({ manifest, canvas })));
  const index = labelIndex({
    graining: ['faux oak', 'wood graining'],
    marbling: ['https://vocab.example.org/material/marbling', 'faux marble'],
    gilding: ['gilding', 'gold leaf'],
  });
  const annotations = parseAnnotationDocument(fixture('annotations/halves-tags.json'), SRC).annotations;
  const { regions, skipped } = extractRegions(annotations, canvases, index);

  it('maps synonyms from two annotators to one class', () => {
    expect(regions.map((r) => [r.key.replace(/.*tags\//, ''), r.label])).toEqual([
      ['1', 'graining'],
      ['2', 'marbling'],
      ['3#0', 'gilding'],
      ['3#1', 'gilding'],
    ]);
  });
  it('resolves percent against the canvas: 55%,10% of 2000×1000 (Media Fragments #naming-space)', () => {
    const r = regions.find((x) => x.key.endsWith('3#0'))!;
    expect(r.bounds).toEqual({ x: 1100, y: 100, w: 200, h: 200 });
  });
  it('reads the relative SVG path triangle: M1200,500 l400,0 l0,400 z', () => {
    const r = regions.find((x) => x.key.endsWith('/2'))!;
    expect(r.bounds).toEqual({ x: 1200, y: 500, w: 400, h: 400 });
  });
  it('skips the point selector with a reason', () => {
    expect(skipped).toEqual([{ annotationId: 'https://iiif.example.org/annotations/halves-tags/4', reason: 'point-selector', detail: 'a PointSelector marks a point, not an area' }]);
  });
  it('refuses a label value listed under two classes', () => {
    expect(() => labelIndex({ a: ['x'], b: ['X '] })).toThrow(/both a and b/);
  });
});

describe('malformed annotations', () => {
  const page = (items: unknown[]) => ({ type: 'AnnotationPage', items });
  it.each([
    [page([{ id: 'a', type: 'Annotation', body: 'x' }]), '/items/0/target', 'at least one target'],
    [page([{ type: 'Annotation', target: 'c' }]), '/items/0/id', 'expected an id'],
    [page([{ id: 'a', type: 'Annotation', target: 'c#xywh=1,2,3' }]), '/items/0/target', 'four non-negative numbers'],
    [page([{ id: 'a', type: 'Annotation', target: { source: 'c', selector: { type: 'SvgSelector', value: '<svg><path d="M0 0 L1 1"></svg>' } } }]), '/items/0/target/selector/value', 'not well-formed'],
    [page([{ id: 'a', type: 'Annotation', target: { source: 'c', selector: { type: 'XPathSelector', value: '/a' } } }]), '/items/0/target/selector/type', 'not supported'],
    [{ type: 'Manifest' }, '/type', 'expected "AnnotationPage"'],
  ])('case %#', (doc, pointer, detail) => {
    const err = thrown(() => parseAnnotationDocument(doc, 'a.json'));
    expect(err).toBeInstanceOf(InputError);
    expect(err.message).toMatch(new RegExp(`^a\\.json at ${pointer.replace(/\//g, '\\/')}: `));
    expect(err.message).toContain(detail);
  });
});
