import { InputError } from '../errors.ts';
import { parseXywh } from '../geometry/media-fragment.ts';
import { svgShapes } from '../annotation/svg-selector.ts';
import type { RegionAnnotation } from '../annotation/web-annotation.ts';
import { parseCsv } from './csv.ts';

export const SHEET_COLUMNS = ['manifest', 'canvas', 'xywh', 'svg', 'label', 'group'] as const;

/**
 * Reads a region sheet: CSV with a header naming the columns manifest, canvas,
 * xywh, svg, label, group (any order; group optional). Each row is one region;
 * either xywh (Media Fragments form, with or without `xywh=`) or svg is given.
 * Errors name the sheet and the cell as a JSON Pointer `/<row>/<column>` (row 1 is the header).
 */
export function parseSheet(text: string, source: string): { annotations: RegionAnnotation[]; manifests: string[] } {
  let rows: string[][];
  try {
    rows = parseCsv(text);
  } catch (err) {
    throw new InputError('E_SHEET_INVALID', source, '', (err as Error).message);
  }
  if (rows.length === 0) throw new InputError('E_SHEET_INVALID', source, '', 'the sheet is empty');
  const header = rows[0].map((h) => h.trim().toLowerCase());
  for (const col of ['manifest', 'canvas', 'label']) {
    if (!header.includes(col)) throw new InputError('E_SHEET_INVALID', source, '/1', `the header lacks the column "${col}" (columns: ${SHEET_COLUMNS.join(', ')})`);
  }
  const unknown = header.find((h) => !(SHEET_COLUMNS as readonly string[]).includes(h));
  if (unknown !== undefined) throw new InputError('E_SHEET_INVALID', source, '/1', `unknown column "${unknown}" (columns: ${SHEET_COLUMNS.join(', ')})`);
  const col = (row: string[], name: string) => {
    const i = header.indexOf(name);
    return i < 0 ? '' : (row[i] ?? '').trim();
  };
  const annotations: RegionAnnotation[] = [];
  const manifests = new Set<string>();
  rows.slice(1).forEach((row, k) => {
    const line = k + 2;
    const at = (name: string) => `/${line}/${name}`;
    const manifest = col(row, 'manifest'), canvas = col(row, 'canvas'), label = col(row, 'label');
    if (!manifest) throw new InputError('E_SHEET_INVALID', source, at('manifest'), 'is empty');
    if (!canvas) throw new InputError('E_SHEET_INVALID', source, at('canvas'), 'is empty');
    if (!label) throw new InputError('E_SHEET_INVALID', source, at('label'), 'is empty');
    const xywh = col(row, 'xywh'), svg = col(row, 'svg');
    if ((xywh === '') === (svg === '')) throw new InputError('E_SHEET_INVALID', source, at('xywh'), 'give exactly one of xywh or svg');
    let selector: RegionAnnotation['targets'][number]['selector'];
    try {
      if (xywh) {
        const f = parseXywh(xywh.startsWith('xywh=') ? xywh : `xywh=${xywh}`);
        selector = { kind: 'xywh', fragment: f! };
      } else {
        selector = { kind: 'svg', rings: svgShapes(svg) };
      }
    } catch (err) {
      throw new InputError('E_SHEET_INVALID', source, at(xywh ? 'xywh' : 'svg'), (err as Error).message);
    }
    manifests.add(manifest);
    const group = col(row, 'group');
    annotations.push({
      id: `${source}#row=${line}`,
      source,
      pointer: `/${line}`,
      labels: [label],
      tags: [{ value: label, purpose: 'tagging' }],
      motivations: ['tagging'],
      targets: [{ canvasId: canvas, selector, pointer: `/${line}` }],
      ...(group ? { group } : {}),
    });
  });
  return { annotations, manifests: [...manifests].sort() };
}
