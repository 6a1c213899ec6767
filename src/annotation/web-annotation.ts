import type { Point } from '../geometry/rect.ts';
import { SpatialFragment, parseXywh, splitFragment } from '../geometry/media-fragment.ts';
import { JsonView } from '../iiif/json-view.ts';
import { pickText, readLanguageMap } from '../iiif/language-map.ts';
import { ProblemLog, Read } from '../iiif/problems.ts';
import { BodyTag, labelValues, textTag } from './body-tags.ts';
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
  /** The manifest the target says it is within (Open Annotation `within` on the target). */
  within?: string;
}

/** A W3C Web Annotation (or an Open Annotation read into the same shape), reduced to what a dataset needs. */
export interface RegionAnnotation {
  id: string;
  source: string;
  pointer: string;
  /** Body values that may name a class (no purpose, or a labelling one), in document order. */
  labels: string[];
  /** Every body value with its purpose and language, in document order (kept in the index). */
  tags: BodyTag[];
  /** Bodies that could not be read as text, an IRI or a tag: why, for the skip record. */
  unreadableBodies?: string[];
  annotator?: string;
  motivations: string[];
  targets: AnnotationTarget[];
  /** An explicit group (sheet rows sharing a `group` value). */
  group?: string;
  /**
   * The manifest the annotation was reached through (a page or list its canvas
   * or the manifest references). Canvas ids are then looked up in that manifest only,
   * so two manifests that reuse a canvas id cannot get each other's regions.
   */
  manifestId?: string;
}

export interface AnnotationDocument {
  annotations: RegionAnnotation[];
  /** Pages referenced but not embedded (AnnotationCollection `first`/`next`), to fetch. */
  pageRefs: string[];
}

/**
 * Reads a W3C AnnotationPage, AnnotationCollection, single Annotation, or a
 * plain array of annotations, leniently: a malformed annotation is a problem and
 * the others are kept. Painting annotations are ignored: they are images, not regions.
 */
export function readAnnotationDocument(doc: unknown, source: string, basePointer = ''): Read<AnnotationDocument> {
  const view = new JsonView(doc, source, 'E_ANNOTATION_INVALID', basePointer);
  const out: AnnotationDocument = { annotations: [], pageRefs: [] };
  const log = new ProblemLog();
  const readItems = (items: JsonView[]) => {
    for (const item of items) {
      const a = log.attempt(() => readAnnotation(item, source));
      if (a) out.annotations.push(a);
    }
  };
  const readPage = (page: JsonView) => {
    readItems(page.at('items').list());
    const next = page.at('next');
    if (next.exists()) out.pageRefs.push(next.isString() ? (next.value as string).trim() : next.requireId().trim());
  };
  if (view.isArray()) {
    readItems(view.items());
  } else if (view.hasType('AnnotationPage')) {
    if (!view.at('items').exists()) view.at('items').fail('an array of annotations');
    readPage(view);
  } else if (view.hasType('AnnotationCollection')) {
    const first = view.at('first');
    if (!first.exists()) first.fail('a first page (id or embedded AnnotationPage)');
    if (first.isString()) out.pageRefs.push((first.value as string).trim());
    else if (first.at('items').exists()) readPage(first);
    else out.pageRefs.push(first.requireId().trim());
  } else if (view.hasType('Annotation')) {
    readItems([view]);
  } else {
    view.at('type').fail('"AnnotationPage", "AnnotationCollection", "Annotation" or an array of annotations');
  }
  return { value: out, problems: log.problems };
}

/** Strict reading: the first problem throws (documents the user wrote). */
export function parseAnnotationDocument(doc: unknown, source: string, basePointer = ''): AnnotationDocument {
  const { value, problems } = readAnnotationDocument(doc, source, basePointer);
  if (problems.length) throw problems[0];
  return value;
}

function readAnnotation(view: JsonView, source: string): RegionAnnotation | undefined {
  view.object();
  if (!view.hasType('Annotation') && !view.hasType('oa:Annotation')) view.at('type').fail('"Annotation"');
  const id = view.requireId().trim();
  const motivations = view.at('motivation').list().map((m) => m.string().trim());
  if (motivations.includes('painting')) return undefined;
  const tags: BodyTag[] = [];
  const unreadable: string[] = [];
  if (view.at('bodyValue').exists()) tags.push(textTag(view.at('bodyValue').string(), {}));
  for (const body of view.at('body').list()) readBody(body, undefined, tags, unreadable);
  const targets = view.at('target').list();
  if (targets.length === 0) view.at('target').fail('at least one target (Web Annotation §3.1)');
  const annotator = readCreator(view.at('creator'));
  return {
    id,
    source,
    pointer: view.pointer,
    labels: labelValues(tags),
    tags,
    ...(unreadable.length ? { unreadableBodies: unreadable } : {}),
    ...(annotator ? { annotator } : {}),
    motivations,
    targets: targets.flatMap((t) => readTarget(t)),
  };
}

function purposeOf(body: JsonView, inherited: string | undefined): string | undefined {
  const purposes = body.isObject() ? body.at('purpose').list().filter((p) => p.isString()).map((p) => (p.value as string).trim()) : [];
  // A body with several purposes: a labelling one, if any, decides whether it names a class.
  return purposes.find((p) => p === 'tagging' || p === 'classifying' || p === 'identifying') ?? purposes[0] ?? inherited;
}

function languageOf(body: JsonView): string | undefined {
  const lang = body.at('language').list().find((l) => l.isString());
  return lang ? (lang.value as string).trim() : undefined;
}

/**
 * Reads one body into tags (Web Annotation §3.2): an IRI string, a TextualBody
 * (`value`, with format and language), a Choice (each item, §3.2.7), a
 * SpecificResource whose `source` is an IRI or an embedded body (§4), or an
 * external resource by id. A shape none of these fits is noted, not fatal: the
 * annotation then becomes a counted skip if nothing else labels it.
 */
function readBody(body: JsonView, inherited: string | undefined, tags: BodyTag[], unreadable: string[]): void {
  if (body.isString()) {
    tags.push({ value: (body.value as string).trim(), ...(inherited ? { purpose: inherited } : {}) });
    return;
  }
  if (!body.isObject()) {
    unreadable.push(`${body.pointer}: a body must be an IRI or an object`);
    return;
  }
  const purpose = purposeOf(body, inherited);
  if (body.hasType('Choice')) {
    const items = body.at('items').list();
    if (items.length === 0) unreadable.push(`${body.pointer}: a Choice with no items`);
    for (const item of items) readBody(item, purpose, tags, unreadable);
    return;
  }
  if (body.hasType('SpecificResource')) {
    const src = body.at('source');
    if (src.isString()) tags.push({ value: (src.value as string).trim(), ...(purpose ? { purpose } : {}) });
    else if (src.isObject()) readBody(src, purpose, tags, unreadable);
    else unreadable.push(`${body.pointer}/source: a SpecificResource body without a source`);
    return;
  }
  const value = body.at('value');
  if (value.exists()) {
    if (!value.isString()) {
      unreadable.push(`${value.pointer}: a body value must be a string`);
      return;
    }
    const format = body.at('format').list().find((f) => f.isString())?.value as string | undefined;
    tags.push(textTag(value.value as string, { ...(purpose ? { purpose } : {}), ...(languageOf(body) ? { language: languageOf(body) } : {}), ...(format ? { format } : {}) }));
    return;
  }
  const id = body.idOf();
  if (id) {
    tags.push({ value: id.trim(), ...(purpose ? { purpose } : {}) });
    return;
  }
  unreadable.push(`${body.pointer}: a body with neither a value, an id nor a source`);
}

export function readCreator(view: JsonView): string | undefined {
  const first = view.list()[0];
  if (!first) return undefined;
  if (first.isString()) return first.value as string;
  if (!first.isObject()) return undefined;
  for (const key of ['name', 'nickname', 'label', 'foaf:name']) {
    const v = first.at(key);
    if (v.isString()) return v.value as string;
    if (v.isObject()) return pickText(readLanguageMap(v)) || undefined;
  }
  return first.idOf();
}

function readTarget(target: JsonView): AnnotationTarget[] {
  if (target.isString()) {
    const { base, fragment } = splitFragment((target.value as string).trim());
    return [{ canvasId: base, selector: fragmentSelector(target, fragment), pointer: target.pointer }];
  }
  target.object();
  if (!target.has('source')) {
    const { base, fragment } = splitFragment(target.requireId().trim());
    return [{ canvasId: base, selector: fragmentSelector(target, fragment), pointer: target.pointer }];
  }
  const src = target.at('source');
  const sourceId = (src.isString() ? (src.value as string) : src.requireId()).trim();
  const { base, fragment } = splitFragment(sourceId);
  const selectors = target.at('selector').list();
  if (selectors.length === 0) return [{ canvasId: base, selector: fragmentSelector(target, fragment), pointer: target.pointer }];
  // Several selectors describe one region in several ways (Web Annotation §4.2): take the most precise we can read.
  return [{ canvasId: base, selector: mostPrecise(selectors.map((s) => readSelector(s))), pointer: target.pointer }];
}

/** Of several selectors for one segment, the most precise: a shape, then a box, then a point. */
export function mostPrecise(read: TargetSelector[]): TargetSelector {
  const rank = (t: TargetSelector) => (t.kind === 'svg' ? 0 : t.kind === 'xywh' ? 1 : t.kind === 'point' ? 2 : 3);
  return read.slice().sort((a, b) => rank(a) - rank(b))[0];
}

/** A `#xywh=` fragment (or none: the whole resource); decimals accepted (Media Fragments numbers, common practice). */
export function fragmentSelector(view: JsonView, fragment: string | undefined): TargetSelector {
  if (fragment === undefined) return { kind: 'whole' };
  try {
    const f = parseXywh(fragment.trim());
    return f ? { kind: 'xywh', fragment: f } : { kind: 'whole' };
  } catch (err) {
    throw view.error((err as Error).message);
  }
}

/** Inline SVG of an SvgSelector, in canvas units (Web Annotation §4.2.7). */
export function svgSelector(value: JsonView): TargetSelector {
  try {
    return { kind: 'svg', rings: svgShapes(value.string()) };
  } catch (err) {
    if (err instanceof SyntaxError) throw value.error(err.message);
    throw err;
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
    result = svgSelector(value);
  } else if (sel.hasType('PointSelector')) {
    result = { kind: 'point', x: sel.at('x').exists() ? sel.at('x').number() : 0, y: sel.at('y').exists() ? sel.at('y').number() : 0 };
  } else {
    throw sel.at('type').error(`selector type ${JSON.stringify(sel.types().join(','))} is not supported (FragmentSelector, SvgSelector, PointSelector)`);
  }
  const refined = sel.at('refinedBy');
  if (refined.exists()) throw refined.error('refinedBy selectors are not supported');
  return result;
}
