import { describe, expect, it } from 'vitest';
import { parseCsv } from '../../src/sources/csv.ts';
import { parseSheet } from '../../src/sources/sheet.ts';
import { InputError } from '../../src/errors.ts';

describe('CSV (RFC 4180)', () => {
  it('reads quoted fields with commas, doubled quotes and line breaks, CRLF or LF', () => {
    expect(parseCsv('a,b\r\n"1,2","say ""hi"""\n"multi\nline",x\n')).toEqual([['a', 'b'], ['1,2', 'say "hi"'], ['multi\nline', 'x']]);
  });
  it('refuses an unclosed quote', () => expect(() => parseCsv('a,"b\n')).toThrow(/never closed/));
});

describe('region sheets', () => {
  const header = 'manifest,canvas,xywh,svg,label,group\n';
  it('reads xywh and svg rows, and carries the group', () => {
    const text = `${header}m.json,https://x.example/c1,"10,20,30,40",,faux oak,panel-7\nm.json,https://x.example/c1,,"<svg><polygon points='0,0 10,0 0,10'/></svg>",gold leaf,panel-7\n`;
    const { annotations, manifests } = parseSheet(text, 'regions.csv');
    expect(manifests).toEqual(['m.json']);
    expect(annotations.map((a) => [a.id, a.labels[0], a.group, a.targets[0].selector.kind])).toEqual([
      ['regions.csv#row=2', 'faux oak', 'panel-7', 'xywh'],
      ['regions.csv#row=3', 'gold leaf', 'panel-7', 'svg'],
    ]);
  });
  it.each([
    ['manifest,canvas,label\n,c,oak\n', '/2/manifest', 'is empty'],
    [`${header}m,c,"1,2,3,4","<svg/>",oak,\n`, '/2/xywh', 'give exactly one of xywh or svg'],
    [`${header}m,c,,,oak,\n`, '/2/xywh', 'give exactly one of xywh or svg'],
    ['manifest,label\nm,oak\n', '/1', 'the header lacks the column "canvas" (columns: manifest, canvas, xywh, svg, label, group)'],
  ])('refuses %j', (text, pointer, detail) => {
    try {
      parseSheet(text, 'regions.csv');
      throw new Error('no error');
    } catch (err) {
      expect(err).toBeInstanceOf(InputError);
      expect((err as Error).message).toBe(`regions.csv at ${pointer}: ${detail}`);
    }
  });
});
