import { JsonView } from './json-view.ts';
import { pickText, readLanguageMap } from './language-map.ts';

/** The Image API major version: 1 (1.0/1.1), 2 (2.0/2.1) or 3 (3.0). */
export type ImageApiVersion = 1 | 2 | 3;
export type ComplianceLevel = 0 | 1 | 2;

export interface TileSpec {
  width: number;
  height: number;
  scaleFactors: number[];
}

export interface PhysicalScale {
  /** Multiply a pixel or canvas dimension by this to get `units` (services annex §3.3). */
  scale: number;
  units: 'mm' | 'cm' | 'in';
}

/** What an image service can do, normalised across Image API 2.1 and 3.0. */
export interface ImageService {
  /** The id the service declares. */
  id: string;
  /** The base URI used to build requests: the fetched info.json address minus `/info.json` when known, else `id`. */
  base: string;
  version: ImageApiVersion;
  level: ComplianceLevel;
  width: number;
  height: number;
  /** Limits with the spec's inference applied: maxHeight = maxWidth when only maxWidth is given. */
  maxWidth?: number;
  maxHeight?: number;
  maxArea?: number;
  sizes: { width: number; height: number }[];
  tiles: TileSpec[];
  formats: string[];
  qualities: string[];
  features: string[];
  rights?: string;
  attribution?: string;
  physical?: PhysicalScale;
}

/** A reference to an image service found inside a Presentation body (not yet dereferenced). */
export interface ImageServiceRef {
  id: string;
  version: ImageApiVersion;
  level?: ComplianceLevel;
  /** The embedded description, when it carries width and height (then no fetch is needed). */
  embedded?: unknown;
}

/** Sanity limits for declared image sizes (the largest published images are around 10^10 pixels; common practice). */
export const MAX_SIDE = 1_000_000;
export const MAX_AREA = 100_000_000_000;

const V3_CONTEXT = 'http://iiif.io/api/image/3/context.json';
const V2_CONTEXT = 'http://iiif.io/api/image/2/context.json';
// Image API 1.1 §5 names the Stanford URI; IIIF now hosts a 1.x context at iiif.io (both are read as version 1).
const V1_CONTEXTS = ['http://library.stanford.edu/iiif/image-api/1.1/context.json', 'http://iiif.io/api/image/1/context.json'];
const PHYSDIM_PROFILE = 'http://iiif.io/api/annex/services/physdim';

// Features each compliance level implies (Image API 3.0 level{0,1,2}.json; Image API 2.1 level{0,1,2}.json).
const HTTP_FEATURES = ['baseUriRedirect', 'cors', 'jsonldMediaType'];
const LEVEL_FEATURES: Record<ImageApiVersion, Record<ComplianceLevel, string[]>> = {
  3: {
    0: [],
    1: [...HTTP_FEATURES, 'regionByPx', 'regionSquare', 'sizeByH', 'sizeByW', 'sizeByWh'],
    2: [...HTTP_FEATURES, 'regionByPx', 'regionSquare', 'sizeByH', 'sizeByW', 'sizeByWh', 'regionByPct', 'rotationBy90s', 'sizeByConfinedWh', 'sizeByPct'],
  },
  2: {
    0: ['sizeByWhListed'],
    1: [...HTTP_FEATURES, 'regionByPx', 'sizeByH', 'sizeByPct', 'sizeByW'],
    2: [...HTTP_FEATURES, 'regionByPx', 'regionByPct', 'rotationBy90s', 'sizeByConfinedWh', 'sizeByDistortedWh', 'sizeByH', 'sizeByPct', 'sizeByW', 'sizeByWh'],
  },
  // Image API 1.1 compliance: level 0 is full/full/0/native only; level 1 adds x,y,w,h regions, w, ,h and pct:n sizes
  // and rotation by 90s; level 2 adds pct: regions, w,h (which may distort) and !w,h.
  1: {
    0: [],
    1: ['regionByPx', 'sizeByH', 'sizeByPct', 'sizeByW', 'rotationBy90s'],
    2: ['regionByPx', 'regionByPct', 'rotationBy90s', 'sizeByConfinedWh', 'sizeByDistortedWh', 'sizeByH', 'sizeByPct', 'sizeByW'],
  },
};
const LEVEL_FORMATS: Record<ComplianceLevel, string[]> = { 0: ['jpg'], 1: ['jpg'], 2: ['jpg', 'png'] };
const LEVEL_QUALITIES: Record<ImageApiVersion, Record<ComplianceLevel, string[]>> = {
  3: { 0: ['default'], 1: ['default'], 2: ['default', 'color', 'gray'] },
  2: { 0: ['default'], 1: ['default'], 2: ['default', 'color', 'gray', 'bitonal'] },
  // Image API 1.1 §4.4 and compliance: `native` at every level; color, grey and bitonal at level 2.
  1: { 0: ['native'], 1: ['native'], 2: ['native', 'color', 'grey', 'bitonal'] },
};

/** Context URIs as written, white space trimmed (some manifests carry leading spaces). */
function contexts(view: JsonView): string[] {
  return view.at('@context').list().filter((c) => c.isString()).map((c) => (c.value as string).trim());
}

function contextIncludes(view: JsonView, uri: string): boolean {
  return contexts(view).includes(uri);
}

/**
 * Reads the compliance level from a profile URI of any version: `level0|1|2` (3.0),
 * `…/image/2/levelN.json` (2.x), `…/image-api/1.1/compliance.html#levelN` (1.1),
 * `…/image-api/compliance.html#levelN` (1.0), and the variants published data carries
 * (`conformance.html`, `…/profiles/levelN.json`, `…/image/2/levelN` without `.json`).
 */
export function levelFromProfile(profile: string): ComplianceLevel | undefined {
  const m = /level([012])(?:\.json)?$/.exec(profile.trim());
  return m ? (Number(m[1]) as ComplianceLevel) : undefined;
}

/** The version a profile URI implies, or undefined (a bare `levelN` is 3.0). */
export function versionFromProfile(profile: string): ImageApiVersion | undefined {
  const s = profile.trim();
  if (/iiif\.io\/api\/image\/2\/(profiles\/)?level[012](\.json)?$/.test(s)) return 2;
  if (/iiif\.io\/api\/image\/1\/(profiles\/)?level[012](\.json)?$/.test(s)) return 1;
  if (/library\.stanford\.edu\/iiif\/image-api\/(1\.[01]\/)?(compliance|conformance)\.html#level[012]$/.test(s)) return 1;
  if (/^level[012]$/.test(s)) return 3;
  return undefined;
}

/**
 * Detects the Image API version of a service description or reference:
 * `type`/`@type` first, then `@context`, then the profile (Presentation 3.0 §3.3.1;
 * Image API 3.0 §5.2 and 2.1 §5.2).
 */
export function detectVersion(view: JsonView): ImageApiVersion | 1 | undefined {
  const types = view.types();
  if (types.includes('ImageService3')) return 3;
  if (types.includes('ImageService2')) return 2;
  if (types.includes('ImageService1')) return 1;
  if (contextIncludes(view, V3_CONTEXT)) return 3;
  if (contextIncludes(view, V2_CONTEXT)) return 2;
  if (contexts(view).some((c) => V1_CONTEXTS.includes(c))) return 1;
  for (const p of view.at('profile').list()) {
    if (!p.isString()) continue;
    const v = versionFromProfile(p.value as string);
    if (v !== undefined) return v;
  }
  // Image API 1.x info.json: `scale_factors`/`tile_width` (1.1 §5) or `identifier` without `@id` (1.0 §5).
  if (view.has('scale_factors') || view.has('tile_width') || (view.has('identifier') && !view.has('@id'))) return 1;
  return undefined;
}

/** Strips trailing slashes and percent-encodes characters a URL cannot carry, leaving existing escapes alone. */
export function normaliseServiceId(id: string): string {
  const trimmed = id.trim().replace(/\/+$/, '');
  return trimmed.replace(/%(?![0-9A-Fa-f]{2})|[^\x21-\x7e]|["<>\\^`{|}]/gu, (c) => encodeURIComponent(c));
}

/**
 * Reads an image service reference from a Presentation `service` entry. Returns
 * undefined for services that are not image services (auth, search, physdim…).
 */
export function readServiceRef(view: JsonView): ImageServiceRef | undefined {
  if (view.isString()) return undefined;
  if (!view.isObject()) return undefined;
  const version = detectVersion(view);
  if (version === undefined) return undefined;
  const id = view.requireId();
  let level: ComplianceLevel | undefined;
  for (const p of view.at('profile').list()) if (p.isString()) level ??= levelFromProfile(p.value as string);
  const embedded = view.has('width') && view.has('height') ? view.value : undefined;
  return { id: normaliseServiceId(id), version, level, ...(embedded !== undefined ? { embedded } : {}) };
}

/** Reads a physical dimensions service (services annex §3.3) from a `service` list, if any. */
export function readPhysicalScale(services: JsonView): PhysicalScale | undefined {
  for (const s of services.list()) {
    if (!s.isObject()) continue;
    const profiles = s.at('profile').list().filter((p) => p.isString()).map((p) => p.value as string);
    if (!profiles.some((p) => p.replace(/\/$/, '') === PHYSDIM_PROFILE)) continue;
    const scale = s.at('physicalScale').positiveNumber();
    const unitsView = s.at('physicalUnits');
    const units = unitsView.string();
    if (units !== 'mm' && units !== 'cm' && units !== 'in') unitsView.fail('"mm", "cm" or "in"');
    return { scale, units: units as PhysicalScale['units'] };
  }
  return undefined;
}

/** Millimetres per unit of the physical dimensions service. */
export function millimetresPer(units: PhysicalScale['units']): number {
  return units === 'mm' ? 1 : units === 'cm' ? 10 : 25.4;
}

function readTiles(view: JsonView): TileSpec[] {
  if (!view.exists()) return [];
  return view.items().map((t) => {
    const width = t.at('width').positiveInt();
    const height = t.at('height').exists() ? t.at('height').positiveInt() : width;
    const scaleFactors = t.at('scaleFactors').nonEmptyItems().map((s) => s.positiveInt());
    return { width, height, scaleFactors: [...new Set(scaleFactors)].sort((a, b) => a - b) };
  });
}

/** Image API 1.1 §5: one tile size (`tile_width`, `tile_height` defaulting to it) for every listed scale factor. */
function readTiles1(view: JsonView): TileSpec[] {
  if (!view.has('tile_width')) return [];
  const width = view.at('tile_width').positiveInt();
  const height = view.at('tile_height').exists() ? view.at('tile_height').positiveInt() : width;
  const listed = view.at('scale_factors').exists() ? view.at('scale_factors').nonEmptyItems().map((s) => s.positiveInt()) : [1];
  return [{ width, height, scaleFactors: [...new Set(listed)].sort((a, b) => a - b) }];
}

function readSizes(view: JsonView): { width: number; height: number }[] {
  if (!view.exists()) return [];
  return view
    .items()
    .map((s) => ({ width: s.at('width').positiveInt(), height: s.at('height').positiveInt() }))
    .sort((a, b) => a.width - b.width || a.height - b.height);
}

function strings(view: JsonView): string[] {
  return view.list().map((v) => v.string());
}

/**
 * Parses an info.json (Image API 2.1 or 3.0) into an ImageService.
 * `fetchedFrom` is the URL the document came from: when it ends in `/info.json`
 * the request base is derived from it, so placeholder ids of static pyramids are harmless.
 */
export function parseInfoJson(doc: unknown, fetchedFrom: string): ImageService {
  const view = JsonView.of(doc, fetchedFrom, 'E_INFO_INVALID');
  view.object();
  const version = detectVersion(view);
  if (version === undefined) throw view.at('@context').error('cannot tell the Image API version (no ImageService type, image context, level profile or 1.x fields)');
  // Image API 1.0 info.json has `identifier` and no `@id` (1.0 §5): the base is where the document was fetched.
  const fetchedBase = /\/info\.json$/.test(fetchedFrom) ? fetchedFrom.replace(/\/info\.json$/, '') : undefined;
  const id = version === 1 && !view.has('@id') && fetchedBase ? fetchedBase : view.requireId();
  const width = view.at('width').positiveInt();
  const height = view.at('height').positiveInt();
  if (width > MAX_SIDE || height > MAX_SIDE || width * height > MAX_AREA) {
    throw view.at('width').error(`claims ${width}×${height} pixels, beyond the ${MAX_SIDE}-pixel side and ${MAX_AREA / 1e9}-gigapixel limits swatchbook accepts`);
  }

  let level: ComplianceLevel | undefined;
  let maxWidth: number | undefined;
  let maxHeight: number | undefined;
  let maxArea: number | undefined;
  const extraFormats: string[] = [];
  const extraQualities: string[] = [];
  const extraFeatures: string[] = [];
  let rights: string | undefined;
  let attribution: string | undefined;

  if (version === 1) {
    // Image API 1.1 §5: top-level scale_factors and tile_width/tile_height, formats and qualities; an optional profile
    // string. Without a stated level a client assumes level 0 (Image API 1.1 §8).
    for (const p of view.at('profile').list()) if (p.isString()) level ??= levelFromProfile(p.value as string);
    level ??= 0;
    extraFormats.push(...strings(view.at('formats')));
    extraQualities.push(...strings(view.at('qualities')));
  } else if (version === 3) {
    const profile = view.at('profile');
    level = levelFromProfile(profile.string());
    if (level === undefined) profile.fail('"level0", "level1" or "level2"');
    maxWidth = view.at('maxWidth').optPositiveInt();
    maxHeight = view.at('maxHeight').optPositiveInt();
    maxArea = view.at('maxArea').optPositiveInt();
    extraFormats.push(...strings(view.at('extraFormats')));
    extraQualities.push(...strings(view.at('extraQualities')));
    extraFeatures.push(...strings(view.at('extraFeatures')));
    rights = view.at('rights').optString();
  } else {
    const profiles = view.at('profile').list();
    if (profiles.length === 0) view.at('profile').fail('a compliance level URI or a list starting with one');
    for (const p of profiles) {
      if (p.isString()) {
        level ??= levelFromProfile(p.value as string);
        continue;
      }
      if (!p.isObject()) p.fail('a string or an object');
      extraFormats.push(...strings(p.at('formats')));
      extraQualities.push(...strings(p.at('qualities')));
      extraFeatures.push(...strings(p.at('supports')));
      maxWidth ??= p.at('maxWidth').optPositiveInt();
      maxHeight ??= p.at('maxHeight').optPositiveInt();
      maxArea ??= p.at('maxArea').optPositiveInt();
    }
    // Some 2.x servers also put the limits at the top level.
    maxWidth ??= view.at('maxWidth').optPositiveInt();
    maxHeight ??= view.at('maxHeight').optPositiveInt();
    maxArea ??= view.at('maxArea').optPositiveInt();
    if (level === undefined) view.at('profile').fail('a profile naming http://iiif.io/api/image/2/level0.json, level1.json or level2.json');
    const license = view.at('license').list().find((l) => l.isString());
    rights = license?.value as string | undefined;
    const attr = readLanguageMap(view.at('attribution'));
    attribution = attr ? pickText(attr) : undefined;
  }
  if (maxHeight !== undefined && maxWidth === undefined) {
    throw view.at('maxWidth').error('maxWidth must be present when maxHeight is (Image API 3.0 §5.2)');
  }
  if (maxWidth !== undefined && maxHeight === undefined) maxHeight = maxWidth;

  const lvl = level as ComplianceLevel;
  const base = fetchedBase ?? normaliseServiceId(id);
  const physical = readPhysicalScale(view.at('service'));
  return {
    id: normaliseServiceId(id),
    base,
    version,
    level: lvl,
    width,
    height,
    ...(maxWidth !== undefined ? { maxWidth } : {}),
    ...(maxHeight !== undefined ? { maxHeight } : {}),
    ...(maxArea !== undefined ? { maxArea } : {}),
    sizes: readSizes(view.at('sizes')),
    tiles: version === 1 ? readTiles1(view) : readTiles(view.at('tiles')),
    formats: uniqueSorted([...LEVEL_FORMATS[lvl], ...extraFormats]),
    qualities: uniqueSorted([...LEVEL_QUALITIES[version][lvl], ...extraQualities]),
    features: uniqueSorted([...LEVEL_FEATURES[version][lvl], ...extraFeatures]),
    ...(rights !== undefined ? { rights } : {}),
    ...(attribution ? { attribution } : {}),
    ...(physical ? { physical } : {}),
  };
}

function uniqueSorted(values: string[]): string[] {
  return [...new Set(values)].sort();
}

export function supports(service: ImageService, feature: string): boolean {
  return service.features.includes(feature);
}

/** May the server scale a region above its native size? (3.0 `sizeUpscaling` with `^`; 2.1 `sizeAboveFull`; 1.1 says upscaling MAY be supported, so never assumed.) */
export function canUpscale(service: ImageService): boolean {
  if (service.version === 1) return false;
  return service.version === 3 ? supports(service, 'sizeUpscaling') : supports(service, 'sizeAboveFull');
}

/**
 * The quality name to send: the recipe speaks 2.x/3.0 names, which 1.x spells
 * differently (`default` was `native`, `gray` was `grey`: Image API 2.0 change log "Renamed Qualities").
 * Falls back to the service's default quality when the wanted one is not offered.
 */
export function qualityFor(service: ImageService, wanted: string): { quality: string; note?: string } {
  const spelled = service.version === 1 ? (wanted === 'default' ? 'native' : wanted === 'gray' ? 'grey' : wanted) : wanted;
  if (service.qualities.includes(spelled)) return { quality: spelled };
  const fallback = service.version === 1 ? 'native' : 'default';
  return { quality: fallback, note: `quality ${wanted} not offered by the service; asked for ${fallback}` };
}

/** May the client ask for an exact, possibly aspect-changing `w,h`? */
export function canRequestExactSize(service: ImageService): boolean {
  if (service.level === 0) return false;
  if (service.version === 3) return supports(service, 'sizeByWh');
  return supports(service, 'sizeByDistortedWh') || supports(service, 'sizeByForcedWh') || supports(service, 'sizeByWh');
}

export function canRequestRegion(service: ImageService): boolean {
  return service.level > 0 && supports(service, 'regionByPx');
}

/** The largest output width and height the service allows for a given aspect (spec defaults: no limit). */
export function withinLimits(service: ImageService, w: number, h: number): boolean {
  if (service.maxWidth !== undefined && w > service.maxWidth) return false;
  if (service.maxHeight !== undefined && h > service.maxHeight) return false;
  if (service.maxArea !== undefined && w * h > service.maxArea) return false;
  return true;
}
