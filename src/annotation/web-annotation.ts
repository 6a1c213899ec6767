import type { Point } from '../geometry/rect.ts';
import { SpatialFragment, parseXywh, splitFragment } from '../geometry/media-fragment.ts';
import { JsonView } from '../iiif/json-view.ts';
import { pickText, readLanguageMap } from '../iiif/language-map.ts';
import { svgShapes } from './svg-selector.ts';

/** What part of a canvas an annotation target selects, before the canvas is known. */
export type TargetSelector =
  | { kind: 'whole' }
  | { kind: 'xywh'; fragment: SpatialFragment }
  | { kind: 'svg'; rings: Point[][] }
  | { kind: 'point'; x: number; y: number };

export interface AnnotationTarget {
  canvasId: string;
  selector: TargetSelector;
  pointer: string;
}

/** A W3C Web Annotation reduced to what a dataset needs. */
export interface RegionAnnotation {
  id: string;
  source: string;
  pointer: string;
  /** Body values and IRIs, in document order (TextualBody value, bodyValue, IRI bodies, SpecificResource sources). */
  labels: string[];
  annotator?: string;
  motivations: string[];
  targets: AnnotationTarget[];
  /** An explicit group (sheet rows sharing a `group` value). */
  group?: string;
}

/** Purposes that make a body a label (Web Annotation §3.3.5); a body with no purpose counts too. */
const LABEL_PURPOSES = new Set(['tagging', 'classifying', 'identifying']);

export interface AnnotationDocument {
  annotations: RegionAnnotation[];
  /** Pages referenced but not embedded (AnnotationCollection `first`/`next`), to fetch. */
  pageRefs: string[];
}

/**
 * Reads a W3C AnnotationPage, AnnotationCollection, single Annotation, or a
 * plain array of annotations. Painting annotations are ignored: they are images, not regions.
 */
export function parseAnnotationDocument(doc: unknown, source: string, basePointer = ''): AnnotationDocument {
  const view = new JsonView(doc, source, 'E_ANNOTATION_INVALID', basePointer);
  const out: AnnotationDocument = { annotations: [], pageRefs: [] };
  const readPage = (page: JsonView) => {
    for (const item of page.at('items').list()) {
      const a = readAnnotation(item, source);
      if (a) out.annotations.push(a);
    }
    const next = page.at('next');
    if (next.exists()) out.pageRefs.push(next.isString() ? (next.value as string) : next.requireId());
  };
  if (view.isArray()) {
    for (const item of view.items()) {
      const a = readAnnotation(item, source);
      if (a) out.annotations.push(a);
    }
  } else if (view.hasType('AnnotationPage')) {
    if (!view.at('items').exists()) view.at('items').fail('an array of annotations');
    readPage(view);
  } else if (view.hasType('AnnotationCollection')) {
    const first = view.at('first');
    if (!first.exists()) first.fail('a first page (id or embedded AnnotationPage)');
    if (first.isString()) out.pageRefs.push(first.value as string);
    else if (first.at('items').exists()) readPage(first);
    else out.pageRefs.push(first.requireId());
  } else if (view.hasType('Annotation')) {
    const a = readAnnotation(view, source);
    if (a) out.annotations.push(a);
  } else {
    view.at('type').fail('"AnnotationPage", "AnnotationCollection", "Annotation" or an array of annotations');
  }
  return out;
}

function readAnnotation(view: JsonView, source: string): RegionAnnotation | undefined {
  view.object();
  if (!view.hasType('Annotation') && !view.hasType('oa:Annotation')) view.at('type').fail('"Annotation"');
  const id = view.requireId();
  const motivations = view.at('motivation').list().map((m) => m.string());
  if (motivations.includes('painting')) return undefined;
  const labels: string[] = [];
  if (view.at('bodyValue').exists()) labels.push(view.at('bodyValue').string());
  for (const body of view.at('body').list()) labels.push(...readBodyLabels(body));
  const targets = view.at('target').list();
  if (targets.length === 0) view.at('target').fail('at least one target (Web Annotation §3.1)');
  const annotator = readCreator(view.at('creator'));
  return {
    id,
    source,
    pointer: view.pointer,
    labels,
    ...(annotator ? { annotator } : {}),
    motivations,
    targets: targets.flatMap((t) => readTarget(t)),
  };
}

function readBodyLabels(body: JsonView): string[] {
  if (body.isString()) return [body.value as string];
  body.object();
  const purposes = body.at('purpose').list().map((p) => p.string());
  if (purposes.length > 0 && !purposes.some((p) => LABEL_PURPOSES.has(p))) return [];
  if (body.hasType('Choice')) return body.at('items').list().flatMap(readBodyLabels);
  if (body.hasType('SpecificResource')) {
    const src = body.at('source');
    return src.isString() ? [src.value as string] : [src.requireId()];
  }
  if (body.at('value').exists()) return [body.at('value').string()];
  const id = body.idOf();
  if (id) return [id];
  return body.fail('a TextualBody with a value, an IRI, or a SpecificResource with a source');
}

function readCreator(view: JsonView): string | undefined {
  const first = view.list()[0];
  if (!first) return undefined;
  if (first.isString()) return first.value as string;
  if (!first.isObject()) return undefined;
  for (const key of ['name', 'nickname', 'label']) {
    const v = first.at(key);
    if (v.isString()) return v.value as string;
    if (v.isObject()) return pickText(readLanguageMap(v)) || undefined;
  }
  return first.idOf();
}

function readTarget(target: JsonView): AnnotationTarget[] {
  if (target.isString()) {
    const { base, fragment } = splitFragment(target.value as string);
    return [{ canvasId: base, selector: fragmentSelector(target, fragment), pointer: target.pointer }];
  }
  target.object();
  if (!target.has('source')) {
    const { base, fragment } = splitFragment(target.requireId());
    return [{ canvasId: base, selector: fragmentSelector(target, fragment), pointer: target.pointer }];
  }
  const src = target.at('source');
  const sourceId = src.isString() ? (src.value as string) : src.requireId();
  const { base, fragment } = splitFragment(sourceId);
  const selectors = target.at('selector').list();
  if (selectors.length === 0) return [{ canvasId: base, selector: fragmentSelector(target, fragment), pointer: target.pointer }];
  // Several selectors describe one region in several ways (Web Annotation §4.2): take the most precise we can read.
  const read = selectors.map((s) => readSelector(s));
  const rank = (t: TargetSelector) => (t.kind === 'svg' ? 0 : t.kind === 'xywh' ? 1 : t.kind === 'point' ? 2 : 3);
  const best = read.slice().sort((a, b) => rank(a) - rank(b))[0];
  return [{ canvasId: base, selector: best, pointer: target.pointer }];
}

function fragmentSelector(view: JsonView, fragment: string | undefined): TargetSelector {
  if (fragment === undefined) return { kind: 'whole' };
  try {
    const f = parseXywh(fragment);
    return f ? { kind: 'xywh', fragment: f } : { kind: 'whole' };
  } catch (err) {
    throw view.error((err as Error).message);
  }
}

function readSelector(sel: JsonView): TargetSelector {
  sel.object();
  let result: TargetSelector;
  if (sel.hasType('FragmentSelector')) {
    result = fragmentSelector(sel.at('value'), sel.at('value').string());
  } else if (sel.hasType('SvgSelector')) {
    const value = sel.at('value');
    if (!value.exists()) throw sel.error('external SVG selectors (by id) are not supported; inline the SVG in "value"');
    try {
      result = { kind: 'svg', rings: svgShapes(value.string()) };
    } catch (err) {
      if (err instanceof SyntaxError) throw value.error(err.message);
      throw err;
    }
  } else if (sel.hasType('PointSelector')) {
    result = { kind: 'point', x: sel.at('x').exists() ? sel.at('x').number() : 0, y: sel.at('y').exists() ? sel.at('y').number() : 0 };
  } else {
    throw sel.at('type').error(`selector type ${JSON.stringify(sel.types().join(','))} is not supported (FragmentSelector, SvgSelector, PointSelector)`);
  }
  const refined = sel.at('refinedBy');
  if (refined.exists()) throw refined.error('refinedBy selectors are not supported');
  return result;
}
