import type { Rect } from '../geometry/rect.ts';
import { parseXywh, splitFragment, fragmentToRect } from '../geometry/media-fragment.ts';
import { JsonView } from './json-view.ts';
import { pickText, readLanguageMap, stripHtml } from './language-map.ts';
import { readPhysicalScale } from './image-service.ts';
import { ProblemLog, Read } from './problems.ts';
import {
  AnnotationPageRef,
  Canvas,
  Collection,
  CollectionMember,
  dropRepeatedCanvases,
  Manifest,
  PaintedImage,
  Provenance,
  readImageApiSelector,
  readPaintingTarget,
  readServices,
} from './presentation.ts';

/**
 * Presentation API 2.0/2.1 (and 1.0, whose keys are the same) read into the
 * models the Presentation 3.0 reader produces, following the official mapping
 * (Presentation 3.0 change log §1.2–§1.4): `sequences[0].canvases` → items,
 * canvas `images` → painting annotations, `otherContent` → annotation pages,
 * `license` → rights, `attribution` → requiredStatement, `logo` → provider logo,
 * `within` → partOf, `members` (else `collections` then `manifests`) → items.
 */

/** `@context` values of Presentation 2.x and of the older 1.0 documents. */
const P2_CONTEXTS = [
  'http://iiif.io/api/presentation/2/context.json',
  'http://iiif.io/api/presentation/1/context.json',
  'http://www.shared-canvas.org/ns/context.json',
];

/** Is this a Presentation 1.x/2.x document (by `@context` or an `sc:` type)? */
export function isPresentation2(view: JsonView): boolean {
  const ctx = view.at('@context').list().some((c) => c.isString() && P2_CONTEXTS.includes((c.value as string).trim()));
  return ctx || view.types().some((t) => /^sc:/.test(t.trim()));
}

function stringsOf(view: JsonView): string[] {
  return view.list().map((v) => (v.isString() ? (v.value as string).trim() : v.idOf()?.trim())).filter((v): v is string => !!v);
}

/** Presentation 3.0 §3.1 `rights` note: Creative Commons and RightsStatements.org URIs are written with `http`. */
export function canonicalRightsUri(uri: string): string {
  return uri.trim().replace(/^https:\/\/(creativecommons\.org|rightsstatements\.org)\//i, 'http://$1/');
}

/**
 * P2 `license` (a URI, a link object, or a list) → P3 `rights`: the first Creative
 * Commons or RightsStatements.org URI, in its `http` form (Presentation 3.0
 * change log §1.2.5). A dataset must not lose a licence the publisher stated,
 * so when no such URI is given the first other licence is kept as written.
 */
export function rightsFromLicense(license: JsonView): string | undefined {
  const all = stringsOf(license);
  const registered = all.find((u) => /^https?:\/\/(creativecommons\.org|rightsstatements\.org)\//i.test(u));
  return registered ? canonicalRightsUri(registered) : all[0];
}

/** P2 provenance: `license`, `attribution` (may carry minimal HTML, P2.1 §4.4), `logo`, `within`. */
export function readProvenance2(view: JsonView): Provenance {
  const out: Provenance = { provider: [] };
  const rights = rightsFromLicense(view.at('license'));
  if (rights) out.rights = rights;
  const attribution = readLanguageMap(view.at('attribution'));
  const value = attribution ? stripHtml(pickText(attribution)) : '';
  if (value) out.requiredStatement = { label: 'Attribution', value };
  const logos = stringsOf(view.at('logo'));
  if (logos.length) out.logos = logos;
  const within = stringsOf(view.at('within'));
  if (within.length) out.partOf = within;
  return out;
}

function label2(view: JsonView): string {
  return stripHtml(pickText(readLanguageMap(view.at('label'))));
}

/** `otherContent`: list URIs as strings or objects with `@id` (P2.1 §5.3); lists must not be embedded, but tolerate it. */
function readOtherContent(view: JsonView): AnnotationPageRef[] {
  return view.list().map((ref) => {
    if (ref.isString()) return { id: (ref.value as string).trim(), pointer: ref.pointer };
    ref.object();
    const id = ref.idOf()?.trim();
    const embedded = ref.at('resources').exists() ? ref.value : undefined;
    if (id === undefined && embedded === undefined) ref.fail('an sc:AnnotationList URI or an object with "@id"');
    return { ...(id !== undefined ? { id } : {}), ...(embedded !== undefined ? { embedded } : {}), pointer: ref.pointer };
  });
}

type ImageBody = Omit<PaintedImage, 'target' | 'targetIsWholeCanvas' | 'pointer' | 'annotationId' | 'order'>;

/**
 * A P2 painting `resource` (P2.1 §5.4, §6.1, §6.3): a `dctypes:Image` (its `@id`
 * may carry `#xywh=`, an image segment), an `oa:SpecificResource` with `full` and an
 * ImageApiSelector, or an `oa:Choice` whose `default` is used (`rdf:nil` options skipped).
 * Returns undefined for resources that are not images (text painted on a canvas).
 */
function readResource2(res: JsonView): ImageBody | undefined {
  if (res.isString()) {
    const s = (res.value as string).trim();
    if (s === 'rdf:nil') return undefined;
    return imageFromId(res, s, res);
  }
  res.object();
  if (res.hasType('Choice')) {
    const options = [res.at('default'), ...res.at('item').list()].filter((o) => o.exists() && !(o.isString() && (o.value as string).trim() === 'rdf:nil'));
    if (options.length === 0) res.at('default').fail('a default or an item that is not rdf:nil (P2.1 §6.3)');
    const chosen = readResource2(options[0]);
    if (!chosen) return undefined;
    return { ...chosen, choice: { chosen: chosen.bodyId, of: options.length } };
  }
  if (res.hasType('SpecificResource')) {
    const full = readResource2(res.at('full'));
    if (!full) return undefined;
    let out: ImageBody = full;
    for (const sel of res.at('selector').list()) {
      if (sel.hasType('ImageApiSelector')) {
        const read = readImageApiSelector(sel);
        out = { ...out, ...(read.region ? { selectorRegion: read.region } : {}), ...(read.rotation ? { rotation: read.rotation } : {}) };
      } else if (sel.hasType('FragmentSelector')) {
        const region = imageFragment(sel.at('value'), sel.at('value').string());
        if (region) out = { ...out, selectorRegion: region };
      }
    }
    return out;
  }
  const types = res.types();
  if (types.length > 0 && !res.hasType('Image')) return undefined; // dctypes:Text, sc:… painted text: not an image
  return imageFromId(res, res.requireId().trim(), res);
}

function imageFragment(at: JsonView, fragment: string): Rect | undefined {
  let f;
  try {
    f = parseXywh(fragment);
  } catch (err) {
    throw at.error((err as Error).message);
  }
  if (!f) return undefined;
  if (f.unit !== 'pixel') throw at.error('a percent image segment needs the image size; give the region in pixels');
  const r = fragmentToRect(f, 0, 0);
  if (![r.x, r.y, r.w, r.h].every(Number.isInteger)) throw at.error(`image segment xywh=${r.x},${r.y},${r.w},${r.h} is not in whole pixels`);
  return r;
}

function imageFromId(view: JsonView, rawId: string, body: JsonView): ImageBody {
  const { base, fragment } = splitFragment(rawId);
  const selectorRegion = fragment !== undefined ? imageFragment(view, fragment) : undefined;
  const services = body.isObject() ? readServices(body.at('service')) : [];
  const format = body.isObject() ? body.at('format').optString() : undefined;
  const bw = body.isObject() && body.at('width').exists() ? body.at('width').positiveInt() : undefined;
  const bh = body.isObject() && body.at('height').exists() ? body.at('height').positiveInt() : undefined;
  return {
    bodyId: base,
    services,
    ...(format ? { format } : {}),
    ...(bw ? { bodyWidth: bw } : {}),
    ...(bh ? { bodyHeight: bh } : {}),
    ...(selectorRegion ? { selectorRegion } : {}),
  };
}

function motivationsOf(view: JsonView): string[] {
  return view.at('motivation').list().filter((m) => m.isString()).map((m) => (m.value as string).trim().replace(/^(sc|oa):/, ''));
}

function readCanvas2(view: JsonView, log: ProblemLog): Canvas {
  view.object();
  if (view.types().length > 0 && !view.hasType('Canvas')) view.at('@type').fail('"sc:Canvas"');
  const id = view.requireId().trim();
  if (id.includes('#')) view.at('@id').fail('a canvas URI without a fragment (P2.1 §5.3)');
  const width = view.at('width').positiveInt();
  const height = view.at('height').positiveInt();
  const images: PaintedImage[] = [];
  for (const anno of view.at('images').list()) {
    log.attempt(() => {
      anno.object();
      const motivations = motivationsOf(anno);
      if (motivations.length > 0 && !motivations.includes('painting')) return;
      const on = anno.at('on');
      const { rect, whole } = on.exists() ? readPaintingTarget(on, { id, width, height }) : { rect: { x: 0, y: 0, w: width, h: height }, whole: true };
      const found: PaintedImage[] = [];
      for (const res of anno.at('resource').list()) {
        const img = readResource2(res);
        if (!img) continue;
        const annotationId = anno.idOf()?.trim();
        found.push({ ...img, ...(annotationId ? { annotationId } : {}), target: rect, targetIsWholeCanvas: whole, order: 0, pointer: res.pointer });
      }
      for (const img of found) images.push({ ...img, order: images.length });
    });
  }
  const physical = readPhysicalScale(view.at('service'));
  return {
    id,
    label: label2(view),
    width,
    height,
    images,
    annotationPages: log.attempt(() => readOtherContent(view.at('otherContent'))) ?? [],
    ...(physical ? { physical } : {}),
    pointer: view.pointer,
  };
}

/**
 * Reads a Presentation 2.x (or 1.0) manifest leniently: a malformed canvas or
 * image annotation is a problem and the rest is used. Only the first sequence is
 * read: later ones are given by reference only and repeat the same canvases in
 * another order (P2.1 §5.1).
 */
export function readManifest2(doc: unknown, source: string): Read<Manifest> {
  const view = JsonView.of(doc, source, 'E_MANIFEST_INVALID');
  view.object();
  if (!view.hasType('Manifest')) view.at('@type').fail('"sc:Manifest"');
  const id = view.requireId().trim();
  const log = new ProblemLog();
  const sequence = view.at('sequences').nonEmptyItems()[0];
  const items = sequence.at('canvases');
  const read = items.nonEmptyItems().map((c) => log.attempt(() => readCanvas2(c, log))).filter((c): c is Canvas => c !== undefined);
  return {
    value: {
      id,
      label: label2(view),
      source,
      provenance: readProvenance2(view),
      canvases: dropRepeatedCanvases(read, items, log),
      // Presentation 2.1 §6.7: any resource, the manifest included, may point to lists through otherContent.
      annotationPages: log.attempt(() => readOtherContent(view.at('otherContent'))) ?? [],
    },
    problems: log.problems,
  };
}

/**
 * Reads a Presentation 2.x collection: `members` when present (P2.1 §5.8 says to
 * prefer it), else `collections` then `manifests` (the order the official upgrade uses).
 */
export function readCollection2(doc: unknown, source: string): Read<Collection> {
  const view = JsonView.of(doc, source, 'E_COLLECTION_INVALID');
  view.object();
  if (!view.hasType('Collection')) view.at('@type').fail('"sc:Collection"');
  const id = view.requireId().trim();
  const log = new ProblemLog();
  const lists = view.has('members') ? [view.at('members')] : [view.at('collections'), view.at('manifests')];
  const members: CollectionMember[] = [];
  for (const list of lists) {
    for (const item of list.list()) {
      const m = log.attempt((): CollectionMember => {
        if (item.isString()) {
          const kind = list.pointer.endsWith('/collections') ? 'collection' : 'manifest';
          return { kind, id: (item.value as string).trim(), label: '', pointer: item.pointer };
        }
        item.object();
        const memberId = item.requireId().trim();
        if (item.hasType('Manifest')) return { kind: 'manifest', id: memberId, label: label2(item), pointer: item.pointer };
        if (item.hasType('Collection')) {
          const embedded = item.has('manifests') || item.has('collections') || item.has('members') ? item.value : undefined;
          return { kind: 'collection', id: memberId, label: label2(item), ...(embedded !== undefined ? { embedded } : {}), pointer: item.pointer };
        }
        if (list.pointer.endsWith('/manifests')) return { kind: 'manifest', id: memberId, label: label2(item), pointer: item.pointer };
        if (list.pointer.endsWith('/collections')) return { kind: 'collection', id: memberId, label: label2(item), pointer: item.pointer };
        return item.at('@type').fail('"sc:Manifest" or "sc:Collection"');
      });
      if (m) members.push(m);
    }
  }
  return { value: { id, label: label2(view), source, provenance: readProvenance2(view), members }, problems: log.problems };
}
