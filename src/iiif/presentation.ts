import type { Rect } from '../geometry/rect.ts';
import { fragmentToRect, parseXywh, splitFragment } from '../geometry/media-fragment.ts';
import { JsonView } from './json-view.ts';
import { LanguageMap, pickText, readLanguageMap, stripHtml } from './language-map.ts';
import { ImageServiceRef, PhysicalScale, readPhysicalScale, readServiceRef } from './image-service.ts';
import { ProblemLog, Read } from './problems.ts';

export interface Provenance {
  rights?: string;
  requiredStatement?: { label: string; value: string };
  provider: string[];
  /** Logos of the providers (Presentation 3.0 §3.2 `provider[].logo`; P2 `logo`). */
  logos?: string[];
  /** Containing resources (Presentation 3.0 `partOf`; P2 `within`). */
  partOf?: string[];
}

/** An image painted onto a canvas (Presentation 3.0 §3.4, §5.3, §5.6). */
export interface PaintedImage {
  annotationId?: string;
  bodyId: string;
  format?: string;
  /** Where on the canvas the image is painted, in canvas units. */
  target: Rect;
  targetIsWholeCanvas: boolean;
  bodyWidth?: number;
  bodyHeight?: number;
  /** Image services in document order, version 3 first. */
  services: ImageServiceRef[];
  /** An ImageApiSelector region on a SpecificResource body, in image pixels. */
  selectorRegion?: Rect;
  /** When the body was a Choice: the item taken and how many there were. */
  choice?: { chosen: string; of: number };
  /**
   * Clockwise rotation of the painted image in degrees (ImageApiSelector `rotation`,
   * annex §2.1), `!` mirroring as `mirrored`. Absent when 0.
   */
  rotation?: { degrees: number; mirrored: boolean };
  /** Position in the canvas's painting order: later images are drawn over earlier ones (Presentation 3.0 §3.4 `items`, §5.6). */
  order: number;
  pointer: string;
}

export interface AnnotationPageRef {
  id?: string;
  /** The whole page when embedded (has `items`). */
  embedded?: unknown;
  pointer: string;
}

export interface Canvas {
  id: string;
  label: string;
  width: number;
  height: number;
  images: PaintedImage[];
  annotationPages: AnnotationPageRef[];
  physical?: PhysicalScale;
  pointer: string;
}

export interface Manifest {
  id: string;
  label: string;
  source: string;
  provenance: Provenance;
  canvases: Canvas[];
  /** Non-painting annotation pages on the manifest itself. */
  annotationPages: AnnotationPageRef[];
}

export interface CollectionMember {
  kind: 'manifest' | 'collection';
  id: string;
  label: string;
  /** Embedded child collections come whole. */
  embedded?: unknown;
  pointer: string;
}

export interface Collection {
  id: string;
  label: string;
  source: string;
  provenance: Provenance;
  members: CollectionMember[];
}

const PREZI2_CONTEXT = /iiif\.io\/api\/presentation\/2\/context\.json/;

function checkNotPresentation2(view: JsonView): void {
  const ctx = view.at('@context').list().some((c) => c.isString() && PREZI2_CONTEXT.test(c.value as string));
  if (ctx || view.hasType('sc:Manifest') || view.hasType('sc:Collection')) {
    throw view.at('@context').error('a Presentation 2 document; swatchbook reads Presentation 3.0 (convert it first)');
  }
}

export function labelOf(view: JsonView): string {
  return pickText(readLanguageMap(view.at('label')));
}

function textOf(map: LanguageMap | undefined): string {
  return stripHtml(pickText(map));
}

export function readProvenance(view: JsonView): Provenance {
  const out: Provenance = { provider: [] };
  const rights = view.at('rights');
  if (rights.exists()) out.rights = rights.nonEmptyString();
  const rs = view.at('requiredStatement');
  if (rs.exists()) {
    rs.object();
    out.requiredStatement = { label: textOf(readLanguageMap(rs.at('label'))), value: textOf(readLanguageMap(rs.at('value'))) };
  }
  const logos: string[] = [];
  for (const agent of view.at('provider').list()) {
    const label = labelOf(agent);
    out.provider.push(label || agent.idOf() || '');
    for (const logo of agent.at('logo').list()) if (logo.isObject() && logo.idOf()) logos.push(logo.idOf()!.trim());
  }
  if (logos.length) out.logos = logos;
  const partOf = view.at('partOf').list().map((p) => (p.isString() ? (p.value as string).trim() : p.idOf()?.trim())).filter((p): p is string => !!p);
  if (partOf.length) out.partOf = partOf;
  return out;
}

/** Fills what `inner` lacks from `outer` (a manifest inherits its collection's statements). */
export function mergeProvenance(inner: Provenance, outer: Provenance | undefined): Provenance {
  if (!outer) return inner;
  const logos = inner.logos ?? outer.logos;
  const partOf = inner.partOf ?? outer.partOf;
  return {
    rights: inner.rights ?? outer.rights,
    requiredStatement: inner.requiredStatement ?? outer.requiredStatement,
    provider: inner.provider.length > 0 ? inner.provider : outer.provider,
    ...(logos ? { logos } : {}),
    ...(partOf ? { partOf } : {}),
  };
}

export function readPageRefs(view: JsonView): AnnotationPageRef[] {
  return view.list().map((page) => {
    page.object();
    const id = page.idOf();
    const embedded = page.at('items').exists() ? page.value : undefined;
    if (id === undefined && embedded === undefined) page.fail('an AnnotationPage with an id or items');
    return { ...(id !== undefined ? { id } : {}), ...(embedded !== undefined ? { embedded } : {}), pointer: page.pointer };
  });
}

/** Reads a painting target: the canvas itself, `canvas#xywh=…`, or a SpecificResource with a FragmentSelector. */
export function readPaintingTarget(target: JsonView, canvas: { id: string; width: number; height: number }): { rect: Rect; whole: boolean } {
  let uri: string;
  let fragment: string | undefined;
  if (target.isString()) {
    ({ base: uri, fragment } = splitFragment(target.value as string));
  } else if (target.isObject() && (target.has('source') || target.has('full'))) {
    // `source` (Web Annotation) or `full` (Open Annotation in Presentation 2).
    const src = target.at(target.has('source') ? 'source' : 'full');
    uri = src.isString() ? (src.value as string) : src.requireId();
    const selector = target.at('selector').list()[0];
    if (selector) {
      if (!selector.hasType('FragmentSelector')) selector.fail('a FragmentSelector on a painting target');
      fragment = selector.at('value').string();
    }
  } else {
    ({ base: uri, fragment } = splitFragment(target.requireId()));
  }
  uri = uri.trim();
  if (splitFragment(uri).base !== canvas.id) {
    throw target.error(`painting annotation targets ${JSON.stringify(uri)}, not its canvas ${JSON.stringify(canvas.id)}`);
  }
  const whole = { x: 0, y: 0, w: canvas.width, h: canvas.height };
  if (fragment === undefined) return { rect: whole, whole: true };
  let f;
  try {
    f = parseXywh(fragment);
  } catch (err) {
    throw target.error((err as Error).message);
  }
  if (!f) return { rect: whole, whole: true };
  const r = fragmentToRect(f, canvas.width, canvas.height);
  if (r.x < 0 || r.y < 0 || r.x + r.w > canvas.width + 1e-9 || r.y + r.h > canvas.height + 1e-9) {
    throw target.error(`painting target xywh=${r.x},${r.y},${r.w},${r.h} lies outside the ${canvas.width}×${canvas.height} canvas (Presentation 3.0 §5.3)`);
  }
  return { rect: r, whole: false };
}

export function readServices(view: JsonView): ImageServiceRef[] {
  const refs: ImageServiceRef[] = [];
  for (const s of view.list()) {
    const ref = readServiceRef(s);
    if (ref) refs.push(ref);
  }
  // Prefer version 3, keep document order otherwise (stable sort).
  return refs.sort((a, b) => b.version - a.version);
}

type ImageBody = Omit<PaintedImage, 'target' | 'targetIsWholeCanvas' | 'pointer' | 'annotationId' | 'order'>;

/**
 * Reads an ImageApiSelector (annex §2.1: defaults region `full`, rotation `0`):
 * a pixel region and a rotation in 90° steps. Shared by the Presentation 2 and 3 readers.
 */
export function readImageApiSelector(sel: JsonView): { region?: Rect; rotation?: { degrees: number; mirrored: boolean } } {
  const out: { region?: Rect; rotation?: { degrees: number; mirrored: boolean } } = {};
  const region = sel.at('region');
  if (region.exists() && String(region.value).trim() !== 'full') {
    const m = /^(\d+),(\d+),(\d+),(\d+)$/.exec(region.string().trim());
    if (!m) return region.fail('an ImageApiSelector region "x,y,w,h" in pixels');
    out.region = { x: Number(m[1]), y: Number(m[2]), w: Number(m[3]), h: Number(m[4]) };
    if (out.region.w === 0 || out.region.h === 0) region.fail('a region with positive width and height');
  }
  const rotation = sel.at('rotation');
  if (rotation.exists()) {
    const m = /^(!?)(\d+(?:\.\d+)?)$/.exec(String(rotation.value).trim());
    if (!m) return rotation.fail('a rotation in degrees, optionally after "!" (annex §2.1)');
    const degrees = Number(m[2]) % 360;
    if (degrees !== 0 || m[1] === '!') out.rotation = { degrees, mirrored: m[1] === '!' };
  }
  return out;
}

function readImageBody(body: JsonView): ImageBody {
  if (body.hasType('Choice')) {
    const items = body.at('items').nonEmptyItems();
    const chosen = readImageBody(items[0]);
    return { ...chosen, choice: { chosen: chosen.bodyId, of: items.length } };
  }
  if (body.hasType('SpecificResource')) {
    const source = readImageBody(body.at('source'));
    let selectorRegion: Rect | undefined;
    let rotation: ImageBody['rotation'];
    for (const sel of body.at('selector').list()) {
      if (!sel.hasType('ImageApiSelector')) continue;
      const read = readImageApiSelector(sel);
      selectorRegion = read.region ?? selectorRegion;
      rotation = read.rotation ?? rotation;
    }
    return { ...source, ...(selectorRegion ? { selectorRegion } : {}), ...(rotation ? { rotation } : {}) };
  }
  if (!body.hasType('Image')) body.at('type').fail('"Image", "Choice" or "SpecificResource" as a painting body');
  const bodyId = body.requireId().trim();
  const services = readServices(body.at('service'));
  const format = body.at('format').optString();
  const bw = body.at('width').exists() ? body.at('width').positiveInt() : undefined;
  const bh = body.at('height').exists() ? body.at('height').positiveInt() : undefined;
  return { bodyId, services, ...(format ? { format } : {}), ...(bw ? { bodyWidth: bw } : {}), ...(bh ? { bodyHeight: bh } : {}) };
}

function readCanvas(view: JsonView, log: ProblemLog): Canvas {
  view.object();
  if (!view.hasType('Canvas')) view.at('type').fail('"Canvas"');
  const id = view.requireId().trim();
  if (id.includes('#')) view.at('id').fail('a canvas URI without a fragment (Presentation 3.0 §5.3)');
  const width = view.at('width').positiveInt();
  const height = view.at('height').positiveInt();
  const images: PaintedImage[] = [];
  for (const page of view.at('items').list()) {
    for (const anno of page.at('items').list()) {
      // One malformed painting annotation loses its image, not the canvas: regions on it are then "not painted".
      log.attempt(() => {
        const motivations = anno.at('motivation').list().map((m) => m.string());
        if (!motivations.includes('painting')) return;
        const found: PaintedImage[] = [];
        for (const target of anno.at('target').list()) {
          const { rect, whole } = readPaintingTarget(target, { id, width, height });
          for (const body of anno.at('body').list()) {
            if (body.isObject() && !body.hasType('Image') && !body.hasType('Choice') && !body.hasType('SpecificResource')) continue; // text, audio…
            const img = readImageBody(body);
            const annotationId = anno.idOf();
            found.push({ ...img, ...(annotationId ? { annotationId } : {}), target: rect, targetIsWholeCanvas: whole, order: 0, pointer: body.pointer });
          }
        }
        for (const img of found) images.push({ ...img, order: images.length });
      });
    }
  }
  const physical = readPhysicalScale(view.at('service'));
  return {
    id,
    label: labelOf(view),
    width,
    height,
    images,
    annotationPages: readPageRefs(view.at('annotations')),
    ...(physical ? { physical } : {}),
    pointer: view.pointer,
  };
}

/**
 * Keeps the first of canvases sharing an id within one manifest; the others are problems
 * (Presentation 3.0 §3.2: an id identifies one resource).
 */
export function dropRepeatedCanvases(canvases: Canvas[], items: JsonView, log: ProblemLog): Canvas[] {
  const seen = new Set<string>();
  const out: Canvas[] = [];
  for (const c of canvases) {
    if (seen.has(c.id)) {
      log.problems.push(new JsonView(c, items.source, items.code, c.pointer).error(`canvas id ${JSON.stringify(c.id)} appears twice in the manifest; the first is used`));
      continue;
    }
    seen.add(c.id);
    out.push(c);
  }
  return out;
}

/**
 * Reads a Presentation 3.0 Manifest leniently: a malformed canvas or painting
 * annotation is left out and returned as a problem; what makes the whole
 * document unusable (not a manifest, no id, no canvases) throws InputError.
 */
export function readManifest(doc: unknown, source: string): Read<Manifest> {
  const view = JsonView.of(doc, source, 'E_MANIFEST_INVALID');
  view.object();
  checkNotPresentation2(view);
  if (!view.hasType('Manifest')) view.at('type').fail('"Manifest"');
  const id = view.requireId().trim();
  const log = new ProblemLog();
  const items = view.at('items');
  const read = items.nonEmptyItems().map((c) => log.attempt(() => readCanvas(c, log))).filter((c): c is Canvas => c !== undefined);
  const canvases = dropRepeatedCanvases(read, items, log);
  const manifest: Manifest = {
    id,
    label: labelOf(view),
    source,
    provenance: readProvenance(view),
    canvases,
    annotationPages: log.attempt(() => readPageRefs(view.at('annotations'))) ?? [],
  };
  return { value: manifest, problems: log.problems };
}

/** Parses a Presentation 3.0 Manifest strictly. Throws InputError (E_MANIFEST_INVALID) naming the JSON location. */
export function parseManifest(doc: unknown, source: string): Manifest {
  const { value, problems } = readManifest(doc, source);
  if (problems.length) throw problems[0];
  return value;
}

/** Reads a Presentation 3.0 Collection leniently: a malformed member is a problem, the others are kept. */
export function readCollection(doc: unknown, source: string): Read<Collection> {
  const view = JsonView.of(doc, source, 'E_COLLECTION_INVALID');
  view.object();
  checkNotPresentation2(view);
  if (!view.hasType('Collection')) view.at('type').fail('"Collection"');
  const id = view.requireId().trim();
  const log = new ProblemLog();
  const members: CollectionMember[] = [];
  for (const item of view.at('items').items()) {
    const m = log.attempt((): CollectionMember => {
      item.object();
      const memberId = item.requireId().trim();
      if (item.hasType('Manifest')) return { kind: 'manifest', id: memberId, label: labelOf(item), pointer: item.pointer };
      if (item.hasType('Collection')) {
        const embedded = item.at('items').exists() ? item.value : undefined;
        return { kind: 'collection', id: memberId, label: labelOf(item), ...(embedded ? { embedded } : {}), pointer: item.pointer };
      }
      return item.at('type').fail('"Manifest" or "Collection"');
    });
    if (m) members.push(m);
  }
  return { value: { id, label: labelOf(view), source, provenance: readProvenance(view), members }, problems: log.problems };
}

/** Parses a Presentation 3.0 Collection strictly: members are referenced manifests and referenced or embedded collections. */
export function parseCollection(doc: unknown, source: string): Collection {
  const { value, problems } = readCollection(doc, source);
  if (problems.length) throw problems[0];
  return value;
}

/** Tells a manifest from a collection from the document itself. */
export function documentKind(doc: unknown): 'manifest' | 'collection' | 'annotations' | 'unknown' {
  const view = JsonView.of(doc, '', 'E_MANIFEST_INVALID');
  if (Array.isArray(doc)) return 'annotations';
  if (view.hasType('Manifest') || view.hasType('sc:Manifest')) return 'manifest';
  if (view.hasType('Collection') || view.hasType('sc:Collection')) return 'collection';
  if (view.hasType('AnnotationPage') || view.hasType('AnnotationCollection') || view.hasType('Annotation')) return 'annotations';
  return 'unknown';
}
