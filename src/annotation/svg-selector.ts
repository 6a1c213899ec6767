import type { Point } from '../geometry/rect.ts';
import { flattenPath } from './svg-path.ts';

interface Element {
  name: string;
  attrs: Record<string, string>;
}

/**
 * Reads the shapes of an inline SvgSelector value (Web Annotation §4.2.7: it MUST be
 * well-formed SVG XML; coordinates are in the source's units, for IIIF canvas units).
 * Supported: polygon, polyline (closed for area), rect, circle, ellipse and path.
 * Throws SyntaxError when the XML is not well-formed or holds no shape.
 * Transforms are not applied: a `transform` attribute is refused rather than misread.
 */
export function svgShapes(svg: string, tolerance = 0.25): Point[][] {
  const elements = parseXmlElements(svg);
  const rings: Point[][] = [];
  for (const el of elements) {
    if (el.attrs.transform !== undefined) throw new SyntaxError(`<${el.name}> has a transform attribute, which swatchbook does not apply`);
    switch (el.name) {
      case 'polygon':
      case 'polyline': {
        const nums = numbers(el.attrs.points ?? '', `<${el.name}> points`);
        if (nums.length < 6 || nums.length % 2 !== 0) throw new SyntaxError(`<${el.name}> needs at least three x,y points`);
        const ring: Point[] = [];
        for (let k = 0; k < nums.length; k += 2) ring.push({ x: nums[k], y: nums[k + 1] });
        rings.push(ring);
        break;
      }
      case 'rect': {
        const x = num(el, 'x', 0), y = num(el, 'y', 0), w = num(el, 'width'), h = num(el, 'height');
        if (!(w > 0 && h > 0)) throw new SyntaxError('<rect> needs positive width and height');
        rings.push([{ x, y }, { x: x + w, y }, { x: x + w, y: y + h }, { x, y: y + h }]);
        break;
      }
      case 'circle':
      case 'ellipse': {
        const cx = num(el, 'cx', 0), cy = num(el, 'cy', 0);
        const rx = el.name === 'circle' ? num(el, 'r') : num(el, 'rx');
        const ry = el.name === 'circle' ? rx : num(el, 'ry');
        if (!(rx > 0 && ry > 0)) throw new SyntaxError(`<${el.name}> needs a positive radius`);
        const d = `M${cx - rx},${cy} A${rx},${ry} 0 1 0 ${cx + rx},${cy} A${rx},${ry} 0 1 0 ${cx - rx},${cy} Z`;
        rings.push(...flattenPath(d, tolerance));
        break;
      }
      case 'path':
        for (const sub of flattenPath(el.attrs.d ?? '', tolerance)) if (sub.length >= 3) rings.push(sub);
        break;
      default:
        break;
    }
  }
  if (rings.length === 0) throw new SyntaxError('the SVG holds no polygon, polyline, rect, circle, ellipse or path with an area');
  return rings;
}

function num(el: Element, name: string, fallback?: number): number {
  const raw = el.attrs[name];
  if (raw === undefined) {
    if (fallback !== undefined) return fallback;
    throw new SyntaxError(`<${el.name}> lacks the ${name} attribute`);
  }
  const v = Number(raw.replace(/px$/, ''));
  if (!Number.isFinite(v)) throw new SyntaxError(`<${el.name}> ${name}="${raw}" is not a number`);
  return v;
}

function numbers(text: string, what: string): number[] {
  const parts = text.trim().split(/[\s,]+/).filter((p) => p !== '');
  const out = parts.map(Number);
  if (out.some((n) => !Number.isFinite(n))) throw new SyntaxError(`${what} "${text.slice(0, 40)}" holds something that is not a number`);
  return out;
}

const ENTITY: Record<string, string> = { amp: '&', lt: '<', gt: '>', quot: '"', apos: "'" };

/**
 * A small well-formedness checker and element reader for SVG fragments: tags must
 * nest and close, attributes must be quoted and unique. Enough to refuse broken
 * selectors; not a general XML parser (no DTDs, which SVG selectors have no use for).
 */
export function parseXmlElements(xml: string): Element[] {
  const out: Element[] = [];
  const stack: string[] = [];
  let pos = 0;
  let sawRoot = false;
  const fail = (why: string): never => {
    throw new SyntaxError(`the SVG is not well-formed XML: ${why} (at character ${pos})`);
  };
  while (pos < xml.length) {
    const lt = xml.indexOf('<', pos);
    if (lt < 0) {
      if (xml.slice(pos).trim() !== '' && stack.length === 0) fail('text outside the root element');
      break;
    }
    if (stack.length === 0 && xml.slice(pos, lt).trim() !== '') fail('text outside the root element');
    pos = lt;
    if (xml.startsWith('<!--', pos)) {
      const end = xml.indexOf('-->', pos + 4);
      if (end < 0) fail('unclosed comment');
      pos = end + 3;
      continue;
    }
    if (xml.startsWith('<?', pos)) {
      const end = xml.indexOf('?>', pos + 2);
      if (end < 0) fail('unclosed processing instruction');
      pos = end + 2;
      continue;
    }
    if (xml.startsWith('<![CDATA[', pos)) {
      const end = xml.indexOf(']]>', pos);
      if (end < 0) fail('unclosed CDATA section');
      pos = end + 3;
      continue;
    }
    if (xml.startsWith('<!', pos)) fail('DOCTYPE and declarations are not accepted in a selector');
    const close = /^<\/([A-Za-z_][\w.:-]*)\s*>/.exec(xml.slice(pos));
    if (close) {
      const open = stack.pop();
      if (open !== close[1]) fail(`</${close[1]}> closes <${open ?? 'nothing'}>`);
      pos += close[0].length;
      continue;
    }
    const start = /^<([A-Za-z_][\w.:-]*)/.exec(xml.slice(pos));
    if (!start) fail('a "<" that starts no tag');
    if (stack.length === 0 && sawRoot) fail('more than one root element');
    sawRoot = true;
    const name = start![1];
    pos += start![0].length;
    const attrs: Record<string, string> = {};
    for (;;) {
      const ws = /^\s*/.exec(xml.slice(pos))![0];
      pos += ws.length;
      if (xml.startsWith('/>', pos)) {
        pos += 2;
        out.push({ name: localName(name), attrs });
        break;
      }
      if (xml.startsWith('>', pos)) {
        pos += 1;
        out.push({ name: localName(name), attrs });
        stack.push(name);
        break;
      }
      if (ws === '') fail(`attributes of <${name}> must be separated by white space`);
      const attr = /^([A-Za-z_][\w.:-]*)\s*=\s*("([^"<]*)"|'([^'<]*)')/.exec(xml.slice(pos));
      if (!attr) fail(`a malformed or unquoted attribute in <${name}>`);
      const key = localName(attr![1]);
      if (key in attrs && !attr![1].includes(':')) fail(`attribute ${key} repeated in <${name}>`);
      attrs[key] = (attr![3] ?? attr![4]).replace(/&(amp|lt|gt|quot|apos);/g, (_, e: string) => ENTITY[e]);
      pos += attr![0].length;
    }
  }
  if (stack.length > 0) fail(`<${stack[stack.length - 1]}> is never closed`);
  if (!sawRoot) fail('no element');
  return out;
}

function localName(name: string): string {
  const i = name.indexOf(':');
  return i < 0 ? name : name.slice(i + 1);
}
