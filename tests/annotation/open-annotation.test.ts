import { describe, expect, it } from 'vitest';
import { readAnnotationList } from '../../src/annotation/open-annotation.ts';
import { boundsOf } from '../../src/geometry/rect.ts';
import type { AnnotationTarget } from '../../src/annotation/web-annotation.ts';

// Check values C1, C2, C9–C13 are from ../shared/iiif-p2-facts.md ("Check values"); each check names the
// source the facts file gives. The lists are written for the test in the shapes published data uses.

const P2 = 'http://iiif.io/api/presentation/2/context.json';
const C = 'http://www.example.com/iiif/book1/canvas/p1';
const list = (resources: unknown[]) => ({ '@context': P2, '@id': 'http://www.example.com/iiif/book1/list/p1', '@type': 'sc:AnnotationList', resources });
const anno = (n: number, on: unknown, resource: unknown = { '@type': 'dctypes:Text', chars: 'oak' }, motivation: unknown = 'oa:commenting') => ({ '@id': `http://www.example.com/anno/${n}`, '@type': 'oa:Annotation', motivation, on, resource });
const read = (resources: unknown[]) => readAnnotationList(list(resources), 'http://www.example.com/iiif/book1/list/p1');
const svg = (d: string) => `<svg xmlns='http://www.w3.org/2000/svg'><path xmlns="http://www.w3.org/2000/svg" d="${d}" data-paper-data="{}" fill-opacity="0" fill="#00bfff" stroke="#00bfff"/></svg>`;
const box = (t: AnnotationTarget) => {
  if (t.selector.kind === 'xywh') return [t.selector.fragment.x, t.selector.fragment.y, t.selector.fragment.w, t.selector.fragment.h];
  if (t.selector.kind === 'svg') {
    const b = boundsOf(t.selector.rings.flat());
    return [b.x, b.y, b.w, b.h];
  }
  return [];
};
const round = (v: number[]) => v.map((n) => Math.round(n * 1e5) / 1e5);

describe('Open Annotation targets (on)', () => {
  it('C1: a string with #xywh= is the canvas and the box', () => {
    // P2.1 §6.1
    const { value } = read([anno(1, `${C}#xywh=100,100,300,50`)]);
    expect(value.annotations[0].targets[0].canvasId).toBe(C);
    expect(box(value.annotations[0].targets[0])).toEqual([100, 100, 300, 50]);
  });

  it('a string without a fragment targets the whole canvas', () => {
    const { value } = read([anno(1, C)]);
    expect(value.annotations[0].targets[0].selector).toEqual({ kind: 'whole' });
  });

  it('C2: oa:SpecificResource with full and a FragmentSelector is the same region as the string form', () => {
    // fixtures/list/61/list1.json vs fixtures/list/44/list1.json
    const spec = read([anno(1, { '@type': 'oa:SpecificResource', full: { '@id': C }, selector: { '@type': 'oa:FragmentSelector', value: 'xywh=225,70,750,150' } })]).value;
    const str = read([anno(2, `${C}#xywh=225,70,750,150`)]).value;
    expect(spec.annotations[0].targets[0].canvasId).toBe(C);
    expect(box(spec.annotations[0].targets[0])).toEqual(box(str.annotations[0].targets[0]));
  });

  it('C9: the dual oa:Choice form uses the SVG item, whose bounds agree with the default box', () => {
    // a P2-era viewer's dual-strategy fixture (facts C9)
    const d = 'M1000.24213,219.15375l98.78935,0l0,0l98.78935,0l0,74.09201l0,74.09201l-98.78935,0l0,0l-98.78935,0l0,-74.09201z';
    const { value, problems } = read([anno(1, { '@type': 'oa:SpecificResource', full: C, selector: { '@type': 'oa:Choice', default: { '@type': 'oa:FragmentSelector', value: 'xywh=1000,219,198,148' }, item: { '@type': 'oa:SvgSelector', value: svg(d) } } })]);
    expect(problems).toEqual([]);
    const t = value.annotations[0].targets[0];
    expect(t.selector.kind).toBe('svg');
    expect(round(box(t))).toEqual([1000.24213, 219.15375, 197.5787, 148.18402]);
    expect(box(t).map(Math.round)).toEqual([1000, 219, 198, 148]);
  });

  it('C10: an SvgSelector given with chars (cnt:ContentAsText) and relative path commands', () => {
    // an annotation server's test data (facts C10)
    const d = 'M3002.02122,586.53692l185.50155,0l0,0l185.50155,0l0,166.0886l0,166.0886l-185.50155,0l0,0l-185.50155,0l0,-166.0886z';
    const { value } = read([anno(1, { '@type': 'oa:SpecificResource', full: C, selector: { '@type': 'oa:SvgSelector', chars: svg(d) } })]);
    const [x, y, w, h] = box(value.annotations[0].targets[0]);
    expect([Math.round(x), Math.round(y), Math.round(w), Math.round(h)]).toEqual([3002, 587, 371, 332]);
  });

  it('C11: an array of three dual targets gives three independent targets on one canvas', () => {
    // an annotation server's 3targets.json (facts C11); note round(7948.55) = 7949
    const dual = (d: string, xywh: string) => ({ '@type': 'oa:SpecificResource', full: C, selector: { '@type': 'oa:Choice', default: { '@type': 'oa:FragmentSelector', value: xywh }, item: { '@type': 'oa:SvgSelector', value: svg(d) } } });
    const { value } = read([anno(1, [
      dual('M7948.55201,1839.24146h565.18276v0h565.18276v1013.21025v1013.21025h-565.18276h-565.18276v-1013.21025z', 'xywh=7949,1839,1130,2026'),
      dual('M100,100h50v50h-50z', 'xywh=100,100,50,50'),
      dual('M300,300h20v20h-20z', 'xywh=300,300,20,20'),
    ])]);
    const targets = value.annotations[0].targets;
    expect(targets).toHaveLength(3);
    expect(new Set(targets.map((t) => t.canvasId))).toEqual(new Set([C]));
    expect(box(targets[0]).map(Math.round)).toEqual([7949, 1839, 1130, 2026]);
    expect(targets.map((t) => t.pointer)).toEqual(['/resources/0/on/0', '/resources/0/on/1', '/resources/0/on/2']);
  });

  it('C12: decimal xywh values are accepted as floats', () => {
    // IIIF-Commons parser fixture anno_list_choice.json (facts C12)
    const { value, problems } = read([anno(1, { '@type': 'oa:SpecificResource', full: C, selector: { '@type': 'oa:FragmentSelector', value: 'xywh=2458.3294117573255,4064.0775928284547,148.5859420675797,52.27032787325061' } })]);
    expect(problems).toEqual([]);
    expect(box(value.annotations[0].targets[0])).toEqual([2458.3294117573255, 4064.0775928284547, 148.5859420675797, 52.27032787325061]);
  });
});

describe('Open Annotation bodies (resource) and motivations', () => {
  it('C13: oa:Tag and an HTML dctypes:Text body; tags keep purpose, the HTML is stripped for matching and kept raw', () => {
    // an annotation server's viewer-2.1.4.json (facts C13, OBSERVED)
    const { value } = read([anno(1, `${C}#xywh=1,1,10,10`, [{ '@type': 'oa:Tag', chars: 'tag' }, { '@type': 'dctypes:Text', format: 'text/html', chars: '<p>content</p>' }], ['oa:tagging', 'oa:commenting'])]);
    const a = value.annotations[0];
    expect(a.motivations).toEqual(['tagging', 'commenting']);
    expect(a.tags.filter((t) => t.purpose === 'tagging').map((t) => t.value)).toEqual(['tag']);
    expect(a.tags.find((t) => t.raw)).toEqual({ value: 'content', raw: '<p>content</p>' });
  });

  it('a single resource object, cnt:ContentAsText with chars and a language', () => {
    const { value } = read([anno(1, C, { '@type': ['dctypes:Text', 'cnt:ContentAsText'], chars: 'faux oak', language: 'en' }, 'oa:classifying')]);
    expect(value.annotations[0].labels).toEqual(['faux oak']);
    expect(value.annotations[0].tags[0]).toMatchObject({ value: 'faux oak', language: 'en' });
    expect(value.annotations[0].motivations).toEqual(['classifying']);
  });

  it('sc:painting annotations in a list paint text, not regions: they yield no region annotation', () => {
    // P2.1 §5.5: a painting annotation in a list paints something other than an image
    const { value } = read([anno(1, C, { '@id': 'http://www.example.com/tei.xml', '@type': 'dctypes:Text', format: 'application/tei+xml' }, 'sc:painting'), anno(2, `${C}#xywh=0,0,5,5`)]);
    expect(value.annotations.map((a) => a.id)).toEqual(['http://www.example.com/anno/2']);
  });

  it('one malformed annotation is a problem with its pointer; the others are read', () => {
    const { value, problems } = read([anno(1, `${C}#xywh=1,1,10,10`), anno(2, 42), anno(3, `${C}#xywh=1,2,3`)]);
    expect(value.annotations.map((a) => a.id)).toEqual(['http://www.example.com/anno/1']);
    expect(problems.map((p) => p.pointer)).toEqual(['/resources/1/on', '/resources/2/on']);
  });

  it('a list with next: the following page is returned to fetch (P2.1 §5.9)', () => {
    const { value } = readAnnotationList({ ...list([anno(1, C)]), next: 'http://www.example.com/iiif/book1/list/p1-2' }, 'l');
    expect(value.pageRefs).toEqual(['http://www.example.com/iiif/book1/list/p1-2']);
  });
});
