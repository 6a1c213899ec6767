import { splitFragment } from '../geometry/media-fragment.ts';
import { JsonView } from '../iiif/json-view.ts';
import { ProblemLog, Read } from '../iiif/problems.ts';
import { BodyTag, labelValues, textTag } from './body-tags.ts';
import { AnnotationDocument, AnnotationTarget, fragmentSelector, mostPrecise, readCreator, RegionAnnotation, svgSelector, TargetSelector } from './web-annotation.ts';

/**
 * Open Annotation as Presentation 2.x publishes it (P2.1 §5.5, §6; the JSON keys
 * of the P2 context: `resource` = hasBody, `on` = hasTarget, `full` = hasSource,
 * `chars` = cnt:chars), read into the same RegionAnnotation shape as Web Annotation.
 */

/** `oa:tagging` → `tagging`, `sc:painting` → `painting` (the prefixes of the P2 context). */
function motivationsOf(view: JsonView): string[] {
  return view.at('motivation').list().filter((m) => m.isString()).map((m) => (m.value as string).trim().replace(/^(oa|sc):/, ''));
}

function idOrString(view: JsonView): string | undefined {
  if (view.isString()) return (view.value as string).trim();
  return view.idOf()?.trim();
}

/**
 * Reads an `sc:AnnotationList` (its `resources`, P2.1 §5.5), a plain array of
 * annotations, or a single `oa:Annotation`, leniently. `next` pages (P2.1 §5.9) are returned to fetch.
 */
export function readAnnotationList(doc: unknown, source: string, basePointer = ''): Read<AnnotationDocument> {
  const view = new JsonView(doc, source, 'E_ANNOTATION_INVALID', basePointer);
  const out: AnnotationDocument = { annotations: [], pageRefs: [] };
  const log = new ProblemLog();
  const readItems = (items: JsonView[]) => {
    for (const item of items) {
      const a = log.attempt(() => readOaAnnotation(item, source));
      if (a) out.annotations.push(a);
    }
  };
  if (view.isArray()) readItems(view.items());
  else if (view.hasType('AnnotationList')) {
    readItems(view.at('resources').list());
    const next = view.at('next');
    if (next.exists()) {
      const ref = idOrString(next);
      if (ref) out.pageRefs.push(ref);
    }
  } else if (view.hasType('Layer')) {
    // A layer lists its annotation lists in otherContent (P2.1 §5.7), or pages them from `first`.
    for (const ref of [...view.at('otherContent').list(), ...(view.has('first') ? [view.at('first')] : [])]) {
      const id = idOrString(ref);
      if (id) out.pageRefs.push(id);
    }
  } else if (view.hasType('Annotation')) readItems([view]);
  else view.at('@type').fail('"sc:AnnotationList", "sc:Layer", "oa:Annotation" or an array of annotations');
  return { value: out, problems: log.problems };
}

/** One Open Annotation; painting annotations are images, not regions (undefined). */
export function readOaAnnotation(view: JsonView, source: string): RegionAnnotation | undefined {
  view.object();
  if (!view.hasType('Annotation')) view.at('@type').fail('"oa:Annotation"');
  const id = view.requireId().trim();
  const motivations = motivationsOf(view);
  if (motivations.includes('painting')) return undefined;
  const tags: BodyTag[] = [];
  const unreadable: string[] = [];
  for (const res of view.at('resource').list()) readResource(res, motivations, tags, unreadable);
  const on = view.at('on').list();
  if (on.length === 0) view.at('on').fail('at least one target (P2.1 §5.5: `on` names the canvas)');
  const annotator = readCreator(view.at('annotatedBy').exists() ? view.at('annotatedBy') : view.at('creator'));
  return {
    id,
    source,
    pointer: view.pointer,
    labels: labelValues(tags),
    tags,
    ...(unreadable.length ? { unreadableBodies: unreadable } : {}),
    ...(annotator ? { annotator } : {}),
    motivations,
    // An `on` array holds independent targets, each carrying the same bodies (Web Annotation §3.2.6).
    targets: on.map(readOn),
  };
}

/**
 * The purpose a body carries: OA bodies have none of their own, so tags take
 * `tagging` and text takes the annotation's motivation (`commenting`, `classifying`…).
 */
function bodyPurpose(kind: 'tag' | 'text', motivations: string[]): string | undefined {
  if (kind === 'tag') return 'tagging';
  return motivations.find((m) => m === 'classifying' || m === 'identifying') ?? undefined;
}

/**
 * A `resource` (body): `oa:Tag` or `dctypes:Text`/`cnt:ContentAsText` with `chars`
 * (HTML stripped for matching, kept raw), an IRI (string or `@id`), an
 * `oa:SpecificResource` with `full`, or an `oa:Choice` (default and items).
 */
function readResource(res: JsonView, motivations: string[], tags: BodyTag[], unreadable: string[]): void {
  if (res.isString()) {
    const s = (res.value as string).trim();
    if (s !== 'rdf:nil' && s !== '') tags.push({ value: s });
    return;
  }
  if (!res.isObject()) {
    unreadable.push(`${res.pointer}: a resource must be an IRI or an object`);
    return;
  }
  if (res.hasType('Choice')) {
    const options = [res.at('default'), ...res.at('item').list()].filter((o) => o.exists());
    for (const o of options) readResource(o, motivations, tags, unreadable);
    return;
  }
  if (res.hasType('SpecificResource')) {
    const full = res.at('full');
    if (full.isObject() && (full.has('chars') || full.has('value'))) readResource(full, motivations, tags, unreadable);
    else {
      const id = idOrString(full);
      if (id) tags.push({ value: id });
      else unreadable.push(`${res.pointer}/full: a SpecificResource body without a full resource`);
    }
    return;
  }
  const chars = res.at('chars').exists() ? res.at('chars') : res.at('value');
  if (chars.exists()) {
    if (!chars.isString()) {
      unreadable.push(`${chars.pointer}: chars must be a string`);
      return;
    }
    const isTag = res.hasType('Tag');
    const language = [res.at('language'), res.at('@language')].map((l) => l.list().find((x) => x.isString())?.value as string | undefined).find((l) => l);
    const format = res.at('format').list().find((f) => f.isString())?.value as string | undefined;
    const purpose = bodyPurpose(isTag ? 'tag' : 'text', motivations);
    tags.push(textTag(chars.value as string, { ...(purpose ? { purpose } : {}), ...(language ? { language: language.trim() } : {}), ...(format ? { format } : {}) }));
    return;
  }
  const id = res.idOf();
  if (id) {
    tags.push({ value: id.trim() });
    return;
  }
  unreadable.push(`${res.pointer}: a resource with neither chars, an @id nor a full resource`);
}

/** SvgSelector text: `value` (as P2-era viewers write it) or `chars` (P2.1 §6.4). */
function svgOf(sel: JsonView): TargetSelector {
  const text = sel.at('value').exists() ? sel.at('value') : sel.at('chars');
  if (!text.exists()) throw sel.error('an SvgSelector needs its SVG inline in "value" or "chars"');
  return svgSelector(text);
}

function readOaSelector(sel: JsonView): TargetSelector {
  sel.object();
  if (sel.hasType('SvgSelector')) return svgOf(sel);
  if (sel.hasType('FragmentSelector')) return fragmentSelector(sel.at('value'), sel.at('value').string());
  if (sel.hasType('Choice')) {
    // The dual form: `default` a FragmentSelector box, `item` the SVG shape (a single object or a list).
    // Both select one segment; the shape is the more precise (Web Annotation §4.2: several selectors of one segment).
    const options = [sel.at('default'), ...sel.at('item').list()].filter((o) => o.isObject());
    if (options.length === 0) sel.at('default').fail('a selector');
    return mostPrecise(options.map(readOaSelector));
  }
  if (sel.hasType('PointSelector')) return { kind: 'point', x: sel.at('x').exists() ? sel.at('x').number() : 0, y: sel.at('y').exists() ? sel.at('y').number() : 0 };
  throw sel.at('@type').error(`selector type ${JSON.stringify(sel.types().join(','))} is not supported (oa:FragmentSelector, oa:SvgSelector, oa:Choice of them)`);
}

/**
 * One `on` value (P2.1 §5.5, §6.1): a canvas URI with or without `#xywh=`, or an
 * `oa:SpecificResource` with `full` (the canvas, a URI or an object) and a selector.
 */
function readOn(on: JsonView): AnnotationTarget {
  if (on.isString()) {
    const { base, fragment } = splitFragment((on.value as string).trim());
    return { canvasId: base, selector: fragmentSelector(on, fragment), pointer: on.pointer };
  }
  on.object();
  const within = idOrString(on.at('within').list()[0] ?? on.at('within'));
  const withinField = within ? { within } : {};
  if (!on.has('full')) {
    const { base, fragment } = splitFragment(on.requireId().trim());
    return { canvasId: base, selector: fragmentSelector(on, fragment), pointer: on.pointer, ...withinField };
  }
  const full = on.at('full');
  const fullId = idOrString(full);
  if (!fullId) return full.fail('a canvas URI or an object with "@id"');
  const { base, fragment } = splitFragment(fullId);
  const selectors = on.at('selector').list();
  const selector = selectors.length === 0 ? fragmentSelector(full, fragment) : mostPrecise(selectors.map(readOaSelector));
  return { canvasId: base, selector, pointer: on.pointer, ...withinField };
}
