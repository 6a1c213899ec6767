/**
 * Planning a manifest at a time, so that memory does not grow with the sources:
 * the walk keeps a few facts per manifest (where it is, its canvas ids until the
 * directory of shared ids is made), and each manifest is read again when it is
 * planned (from the cache or its file: nothing is requested twice) and dropped
 * after. Positives first, manifest by manifest; their counts per canvas set
 * every canvas's share of the negatives; then negatives, manifest by manifest.
 * What is planned goes to a sink (kept and sorted in memory, or written away).
 *
 * The result is the plan `planDataset` makes of all sources at once, but for two
 * rules where a manifest at a time cannot see the others: a crop that canvases of
 * two manifests share (the same image service, placement and box) keeps the
 * context of the first manifest by id; an image service that two manifests
 * describe differently (embedded) is read from each manifest's own description.
 */
import { CanvasLookup, canvasKey, extractRegions, labelIndex } from './annotation/regions.ts';
import type { RegionAnnotation } from './annotation/web-annotation.ts';
import type { Fetcher } from './net/fetcher.ts';
import { negativesWanted, pickNegatives, quotasInOrder } from './patch/negatives.ts';
import type { Recipe } from './recipe/types.ts';
import { ManifestEntry, ResolvedSources, ResolveOptions, SourceReader, uniqueAnnotations } from './sources/resolve.ts';
import { byString } from './util/hash.ts';
import { DatasetPlan, DeferredNegatives, PlanSink, PlanTotals, planInto } from './plan/plan-dataset.ts';

/** A manifest as the walk found it, without its canvases. */
interface ManifestFacts {
  id: string;
  location: string;
  local: boolean;
  entry: Omit<ManifestEntry, 'manifest'>;
  /** Until the directory of shared canvas ids is made. */
  canvasIds?: string[];
}

/** An image service as the plan summary lists it. */
export interface ServiceSummary {
  id: string;
  version: number;
  level: number;
  width: number;
  height: number;
}

export interface ManifestPlanResult extends PlanTotals {
  sources: Pick<ResolvedSources, 'documents' | 'failures' | 'notes'>;
  manifests: number;
  /** The image services read, when asked for (`services: true`). */
  services?: ServiceSummary[];
}

export interface ManifestPlanOptions extends ResolveOptions {
  /** Also list the image services (for the plan summary). */
  services?: boolean;
}

export async function planByManifest(recipe: Recipe, fetcher: Fetcher, sink: PlanSink, opts: ManifestPlanOptions = {}): Promise<ManifestPlanResult> {
  const reader = new SourceReader(fetcher, opts);
  const facts: ManifestFacts[] = [];
  await reader.walk(recipe.sources, ({ entry, location, local }) => {
    const { manifest, ...rest } = entry;
    facts.push({ id: manifest.id, location, local, entry: rest, canvasIds: manifest.canvases.map((c) => c.id) });
  });
  facts.sort((a, b) => byString(a.id, b.id));
  const shared = reader.noteSharedCanvases(facts.map((f) => ({ id: f.id, canvasIds: f.canvasIds! })));

  // Annotations bound to no manifest (annotation documents, sheets): each target goes to the manifest
  // whose canvas it names (`within` first, else the first manifest by id with that canvas id).
  const unbound = uniqueAnnotations([...reader.unbound]);
  const owners = unboundOwners(unbound, facts);
  for (const f of facts) delete f.canvasIds;
  const unboundFor = new Map<string, RegionAnnotation[]>();
  for (const a of unbound) {
    for (const m of new Set(owners.get(a)!.filter((o): o is string => o !== undefined))) {
      const list = unboundFor.get(m);
      if (list) list.push(a);
      else unboundFor.set(m, [a]);
    }
  }
  const ownsTarget = (m: string) => (a: RegionAnnotation, i: number) => a.manifestId !== undefined || owners.get(a)![i] === m;

  // An unbound annotation whose id a manifest also binds yields to the bound copy: find those first.
  // Each document's failures and facts are recorded at its first reading: pages in the first pass that
  // reads them, image services in the positives pass; the negatives pass records nothing.
  const shadowed = new Set<string>();
  let pagesRecorded = false;
  if (unbound.length) {
    const ids = new Set(unbound.map((a) => a.id));
    const pagesSeen = new Set(reader.walkedPages);
    for (const f of facts) {
      const entry = await reader.reread(f);
      for (const a of await reader.boundAnnotations(entry, pagesSeen)) if (ids.has(a.id)) shadowed.add(a.id);
    }
    pagesRecorded = true;
  }

  /** Reads each manifest again, with its annotations (each id once, the first manifest's) and image services. */
  async function* eachManifest(record: { pages: boolean; services: boolean }, only?: (f: ManifestFacts, i: number) => boolean) {
    const pagesSeen = new Set(reader.walkedPages);
    const boundSeen = new Set<string>();
    for (let i = 0; i < facts.length; i++) {
      const f = facts[i]!;
      const entry = await reader.reread(f);
      reader.recording = record.pages;
      const bound = await reader.boundAnnotations(entry, pagesSeen);
      const mine = uniqueAnnotations([...bound.filter((a) => !boundSeen.has(a.id)), ...(unboundFor.get(f.id) ?? []).filter((a) => !shadowed.has(a.id))]);
      for (const a of mine) if (a.manifestId !== undefined) boundSeen.add(a.id);
      if (only && !only(f, i)) continue;
      reader.recording = record.services;
      yield { f, i, sources: { manifests: [entry], annotations: mine, services: await reader.services([entry]) } };
    }
  }

  const services = opts.services ? new Map<string, ServiceSummary>() : undefined;
  const rightsExcluded: DatasetPlan['rightsExcluded'] = [];
  // Positives per canvas, per manifest: canvas places and counts in typed arrays, in canvas id order (so the
  // manifests in id order give every canvas in canvas key order), rather than a map of keys.
  const positivesOf: CanvasCounts[] = [];
  for await (const { f, i, sources } of eachManifest({ pages: !pagesRecorded, services: true })) {
    if (services) for (const [id, s] of sources.services) if (!services.has(id)) services.set(id, { id: s.id, version: s.version, level: s.level, width: s.width, height: s.height });
    const planned = planInto(recipe, sources, sink, { negatives: 'none', sharedCanvasIds: shared, ownsTarget: ownsTarget(f.id), reportsAnnotation: (a) => a.manifestId !== undefined });
    positivesOf[i] = canvasCounts(sources.manifests[0]!, planned.positivesPerCanvas);
    rightsExcluded.push(...planned.rightsExcluded);
  }
  reader.recording = false;
  // What no manifest plans: unbound annotations whose label matches no class, and targets on no canvas of the sources.
  const unplaced = extractRegions(unbound.filter((a) => !shadowed.has(a.id)), new CanvasLookup([]), labelIndex(recipe.labels), { ownsTarget: (a, i) => owners.get(a)![i] === undefined });
  for (const x of unplaced.skipped) sink.skip({ key: x.annotationId, reason: x.reason, detail: x.detail });

  const weights: number[] = [];
  for (const c of positivesOf) if (c) for (const n of c.counts) weights.push(n);
  const wanted = negativesWanted({ ratio: recipe.negatives.ratio, classes: Object.keys(recipe.labels).length }, weights.reduce((a, b) => a + b, 0));
  let planned = 0;
  let borrowed = 0;
  if (wanted > 0) {
    // Every canvas's share, in canvas key order (largest remainder over all canvases), kept beside its count.
    const all = quotasInOrder(weights, wanted);
    weights.length = 0;
    let k = 0;
    for (const c of positivesOf) if (c) c.quotas = all.subarray(k, (k += c.counts.length));
    const deferredQuotas = new Map<string, number>();
    const deferred: DeferredNegatives[] = [];
    for await (const { f, i, sources } of eachManifest({ pages: false, services: false }, (_, i) => (positivesOf[i]?.counts.length ?? 0) > 0)) {
      const { positivesPerCanvas, quotas } = countsByKey(sources.manifests[0]!, positivesOf[i]!);
      const n = planInto(recipe, sources, sink, { positives: false, negatives: { positivesPerCanvas, quotas, deferShared: true }, sharedCanvasIds: shared, ownsTarget: ownsTarget(f.id) });
      planned += n.negatives.planned;
      borrowed += n.negatives.borrowedWithinGroup;
      rightsExcluded.push(...n.rightsExcluded);
      if (n.deferred) {
        deferred.push(n.deferred);
        for (const c of n.deferred.canvases) deferredQuotas.set(c.key, quotas.get(c.key)!);
      }
    }
    // Canvases sharing an id across manifests share a group (by canvas or annotation): picked together, as at once.
    if (deferred.length) {
      const spec = { seed: recipe.seed, ratio: recipe.negatives.ratio, margin: recipe.negatives.margin, size: recipe.patch.size, classes: Object.keys(recipe.labels).length };
      const { picks, borrowedWithinGroup } = pickNegatives(spec, deferred.flatMap((d) => d.canvases), deferredQuotas);
      for (const d of deferred) {
        const mine = new Set(d.canvases.map((c) => c.key));
        d.emit(picks.filter((p) => mine.has(p.key)));
      }
      planned += picks.length;
      borrowed += borrowedWithinGroup;
    }
  }
  // A manifest excluded in both passes keeps the rights its first exclusion named.
  const excluded = new Set<string>();
  const firstPerManifest = rightsExcluded.filter((r) => !excluded.has(r.manifestId) && excluded.add(r.manifestId));
  return {
    negatives: { wanted, planned, borrowedWithinGroup: borrowed, shortfall: wanted - planned },
    rightsExcluded: firstPerManifest.sort((a, b) => byString(a.manifestId, b.manifestId)),
    sources: reader.finished(),
    manifests: facts.length,
    ...(services ? { services: [...services.values()].sort((a, b) => byString(a.id, b.id)) } : {}),
  };
}

/**
 * The manifest each target of each unbound annotation lies on (undefined: on no
 * canvas of the sources), as `CanvasLookup.find` would choose it over all
 * manifests: the manifest a target's `within` names when it has the canvas, else
 * the first manifest by id with that canvas id. `facts` come sorted by id.
 */
function unboundOwners(unbound: readonly RegionAnnotation[], facts: readonly ManifestFacts[]): Map<RegionAnnotation, (string | undefined)[]> {
  const wanted = new Set<string>();
  const wantedWithin = new Set<string>();
  for (const a of unbound) {
    for (const t of a.targets) {
      wanted.add(t.canvasId);
      if (t.within !== undefined) wantedWithin.add(canvasKey(t.within, t.canvasId));
    }
  }
  const first = new Map<string, string>();
  const within = new Set<string>();
  for (const f of facts) {
    for (const c of f.canvasIds ?? []) {
      if (wanted.has(c) && !first.has(c)) first.set(c, f.id);
      if (wantedWithin.has(canvasKey(f.id, c))) within.add(canvasKey(f.id, c));
    }
  }
  return new Map(unbound.map((a) => [a, a.targets.map((t) => (t.within !== undefined && within.has(canvasKey(t.within, t.canvasId)) ? t.within : first.get(t.canvasId)))]));
}

/** A manifest's canvases with positives: their places in the manifest, in canvas id order, their counts and quotas. */
interface CanvasCounts {
  places: Int32Array;
  counts: Int32Array;
  quotas?: Int32Array;
}

function canvasCounts(entry: ManifestEntry, byKey: ReadonlyMap<string, number>): CanvasCounts {
  const places: number[] = [];
  const seen = new Set<string>();
  entry.manifest.canvases.forEach((c, i) => {
    const key = canvasKey(entry.manifest.id, c.id);
    if (byKey.has(key) && !seen.has(key)) {
      seen.add(key);
      places.push(i);
    }
  });
  places.sort((a, b) => byString(entry.manifest.canvases[a]!.id, entry.manifest.canvases[b]!.id));
  return { places: Int32Array.from(places), counts: Int32Array.from(places, (i) => byKey.get(canvasKey(entry.manifest.id, entry.manifest.canvases[i]!.id))!) };
}

function countsByKey(entry: ManifestEntry, c: CanvasCounts): { positivesPerCanvas: Map<string, number>; quotas: Map<string, number> } {
  const positivesPerCanvas = new Map<string, number>();
  const quotas = new Map<string, number>();
  c.places.forEach((place, k) => {
    const key = canvasKey(entry.manifest.id, entry.manifest.canvases[place]!.id);
    positivesPerCanvas.set(key, c.counts[k]!);
    quotas.set(key, c.quotas![k]!);
  });
  return { positivesPerCanvas, quotas };
}
