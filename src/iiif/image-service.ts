import { JsonView } from './json-view.ts';
import { pickText, readLanguageMap } from './language-map.ts';

export type ImageApiVersion = 2 | 3;
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
};
const LEVEL_FORMATS: Record<ComplianceLevel, string[]> = { 0: ['jpg'], 1: ['jpg'], 2: ['jpg', 'png'] };
const LEVEL_QUALITIES: Record<ImageApiVersion, Record<ComplianceLevel, string[]>> = {
  3: { 0: ['default'], 1: ['default'], 2: ['default', 'color', 'gray'] },
  2: { 0: ['default'], 1: ['default'], 2: ['default', 'color', 'gray', 'bitonal'] },
};

function contextIncludes(view: JsonView, uri: string): boolean {
  return view.at('@context').list().some((c) => c.isString() && (c.value as string) === uri);
}

/** Reads `level0|1|2` from a v3 profile string or a v2 `…/image/2/levelN.json` URI. */
export function levelFromProfile(profile: string): ComplianceLevel | undefined {
  const m = /level([012])(?:\.json)?$/.exec(profile.trim());
  return m ? (Number(m[1]) as ComplianceLevel) : undefined;
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
  if (view.at('@context').list().some((c) => c.isString() && /iiif\.io\/api\/image\/1\//.test(c.value as string))) return 1;
  for (const p of view.at('profile').list()) {
    if (!p.isString()) continue;
    const s = p.value as string;
    if (/iiif\.io\/api\/image\/2\/level[012]\.json$/.test(s)) return 2;
    if (/iiif\.io\/api\/image\/1\/(compliance\.html#)?level[012]/.test(s)) return 1;
    if (/^level[012]$/.test(s)) return 3;
  }
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
  if (version !== 2 && version !== 3) return undefined;
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
  if (version === 1) throw view.error('Image API 1.x services are not supported (need 2.1 or 3.0)');
  if (version === undefined) throw view.at('@context').error('cannot tell the Image API version (no ImageService2/3 type, image context or level profile)');
  const id = view.requireId();
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

  if (version === 3) {
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
  const base = /\/info\.json$/.test(fetchedFrom) ? fetchedFrom.replace(/\/info\.json$/, '') : normaliseServiceId(id);
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
    tiles: readTiles(view.at('tiles')),
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

/** May the server scale a region above its native size? (3.0 `sizeUpscaling` with `^`; 2.1 `sizeAboveFull`.) */
export function canUpscale(service: ImageService): boolean {
  return service.version === 3 ? supports(service, 'sizeUpscaling') : supports(service, 'sizeAboveFull');
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
