import { dirname, resolve as resolvePath } from 'node:path';
import { FailureRecord, failureFrom, FetchError, InputError, redactUrl, SwatchbookError, UsageError } from '../errors.ts';
import { ImageService, parseInfoJson } from '../iiif/image-service.ts';
import { infoJsonUrl } from '../iiif/image-url.ts';
import type { Read } from '../iiif/problems.ts';
import type { Collection, Manifest } from '../iiif/presentation.ts';
import type { Fetcher } from '../net/fetcher.ts';
import type { RegionAnnotation } from '../annotation/web-annotation.ts';
import type { SourceSpec } from '../recipe/types.ts';
import { byString } from '../util/hash.ts';
import { isUrl, loadJson, loadText } from './load-document.ts';
import { DocumentFamily, READERS, readersFor } from './readers.ts';
import { parseSheet } from './sheet.ts';

export interface ManifestEntry {
  manifest: Manifest;
  /** Collections (ids) through which the manifest was reached, outermost first. */
  collections: string[];
  mmPerCanvasUnit?: number;
  family?: DocumentFamily;
}

export interface SourceDocument {
  location: string;
  kind: 'manifest' | 'collection' | 'annotations' | 'sheet' | 'info';
  sha256: string;
}

/** Facts about the sources worth a line in the card, that are not failures. */
export type SourceNote =
  | { kind: 'collection-cycle'; collection: string; member: string; chain: string[] }
  | { kind: 'canvas-id-shared'; canvasId: string; manifests: string[] };

export interface ResolvedSources {
  manifests: ManifestEntry[];
  annotations: RegionAnnotation[];
  /** Image services by the id their references use. */
  services: Map<string, ImageService>;
  documents: SourceDocument[];
  failures: FailureRecord[];
  notes?: SourceNote[];
}

export interface ResolveOptions {
  /** Problems in documents from other servers end the run (exit 2) instead of becoming failure records. */
  strict?: boolean;
}

const MAX_DEPTH = 16;
const MAX_PAGES = 10_000;

/** What `--strict` raises for a recorded source failure or a note: the record's text, exit 2. */
class StrictError extends SwatchbookError {
  constructor(message: string) {
    super('E_REFUSED', `${message} (--strict)`, 2);
    this.name = 'StrictError';
  }
}

/** A manifest as walking the sources found it, before its annotations and services are read. */
export interface WalkedManifest {
  entry: ManifestEntry;
  /** Where it was read from (a file the recipe names, or a URL). */
  location: string;
  local: boolean;
}

/**
 * Reads a recipe's sources in steps that a caller can take all at once
 * (`resolveSources`) or a manifest at a time (the streaming planner, which reads
 * each manifest again when it plans it rather than hold them all):
 *
 * - `walk`: manifests, collections (recursively; a collection that includes
 *   itself is followed once and noted), annotation documents (following pages)
 *   and sheets, in the recipe's order;
 * - `boundAnnotations`: the annotation pages and lists a manifest references;
 * - `services`: the info.json of every image service painted on canvases.
 *
 * What the user wrote (files the recipe names, sheets) is strict: a problem
 * throws InputError (exit 2). What comes from a server is lenient: a malformed
 * item is a failure record with URL and JSON Pointer and the rest is used; an
 * unusable document is a failure record for that source. `strict` makes those
 * fatal. With `recording` off (a second reading of what was read before) nothing
 * is recorded twice and a document that failed before is not asked for again.
 */
export class SourceReader {
  readonly documents: SourceDocument[] = [];
  readonly failures: FailureRecord[] = [];
  readonly notes: SourceNote[] = [];
  /** Annotations from annotation documents and sheets: bound to no manifest. */
  readonly unbound: RegionAnnotation[] = [];
  /** Annotation pages the walk read (a manifest's page read there is not read again for the manifest). */
  readonly walkedPages = new Set<string>();
  /** Records documents and failures (off for a second reading). */
  recording = true;
  private readonly failedLocations = new Set<string>();
  private readonly failedServices = new Set<string>();

  constructor(
    private readonly fetcher: Fetcher,
    private readonly opts: ResolveOptions = {},
  ) {}

  private record(stage: FailureRecord['stage'], key: string, err: unknown): void {
    const f = failureFrom(stage, key, err);
    if (this.opts.strict) throw err instanceof InputError ? err : new StrictError(`${f.url ?? key}: ${f.reason}`);
    this.failedLocations.add(key);
    if (this.recording) this.failures.push(f);
  }

  /** Errors from a document the user wrote are fatal; from a server they are records. */
  private async guard(local: boolean, stage: FailureRecord['stage'], key: string, work: () => Promise<void>): Promise<void> {
    try {
      await work();
    } catch (err) {
      if (local && !(err instanceof FetchError)) throw err;
      this.record(stage, key, err);
    }
  }

  /** Uses a lenient reading: problems of a local document throw, remote ones are item records. */
  private accept<T>(read: Read<T>, local: boolean, key: string): T {
    if (read.problems.length && (local || this.opts.strict)) throw read.problems[0];
    if (this.recording) for (const p of read.problems) this.failures.push(failureFrom('item', key, p));
    return read.value;
  }

  private document(d: SourceDocument): void {
    if (this.recording) this.documents.push(d);
  }

  /** Hosts named by what the user wrote may be loopback or private (a local image server); see the fetcher's guard. */
  private trust(location: string | undefined): void {
    if (location && isUrl(location)) this.fetcher.trustHost(new URL(location).hostname);
  }

  private noteOrThrow(note: SourceNote, text: string): void {
    if (this.opts.strict) throw new StrictError(text);
    this.notes.push(note);
  }

  /**
   * Walks the sources in the recipe's order. Each manifest is given to
   * `onManifest` the first time its id comes up (a later copy of the id is not).
   */
  async walk(sources: readonly SourceSpec[], onManifest: (m: WalkedManifest) => void): Promise<void> {
    const manifestIds = new Set<string>();
    const addManifest = async (location: string, collections: string[], mm: number | undefined, local: boolean, inherited?: DocumentFamily) =>
      this.guard(local, 'source', location, async () => {
        const loaded = await loadJson(location, this.fetcher, 'E_MANIFEST_INVALID', local);
        this.document({ location, kind: 'manifest', sha256: loaded.sha256 });
        const readers = readersFor(loaded.doc, inherited);
        const manifest = this.accept(readers.manifest(loaded.doc, location), local, location);
        if (local) {
          for (const c of manifest.canvases) {
            for (const img of c.images) for (const ref of img.services) this.trust(ref.id);
            for (const page of c.annotationPages) this.trust(page.id);
          }
          for (const page of manifest.annotationPages) this.trust(page.id);
        }
        if (!manifestIds.has(manifest.id)) {
          manifestIds.add(manifest.id);
          onManifest({ entry: { manifest, collections, family: readers.family, ...(mm !== undefined ? { mmPerCanvasUnit: mm } : {}) }, location, local });
        }
      });

    const walkCollection = async (collection: Collection, family: DocumentFamily, chain: string[], mm: number | undefined, local: boolean) => {
      if (chain.length > MAX_DEPTH) throw new InputError('E_COLLECTION_INVALID', collection.source, '', `collections nest deeper than ${MAX_DEPTH}`);
      const here = [...chain, collection.id];
      for (const member of collection.members) {
        if (here.includes(member.id)) {
          const loop = here.slice(here.indexOf(member.id));
          this.noteOrThrow(
            { kind: 'collection-cycle', collection: collection.id, member: member.id, chain: loop },
            `${collection.source} at ${member.pointer}: collection ${JSON.stringify(member.id)} includes itself (through ${loop.join(' → ')})`,
          );
          continue;
        }
        if (member.kind === 'manifest') {
          await addManifest(member.id, here, mm, false, family);
        } else if (member.embedded !== undefined) {
          await this.guard(local, 'source', member.id, async () => {
            const readers = READERS[family];
            await walkCollection(this.accept(readers.collection(member.embedded, collection.source), local, collection.source), family, here, mm, local);
          });
        } else {
          await this.guard(false, 'source', member.id, async () => {
            const loaded = await loadJson(member.id, this.fetcher, 'E_COLLECTION_INVALID');
            this.document({ location: member.id, kind: 'collection', sha256: loaded.sha256 });
            const readers = readersFor(loaded.doc, family);
            const child = this.accept(readers.collection(loaded.doc, member.id), false, member.id);
            if (child.id !== member.id && here.includes(child.id)) {
              this.noteOrThrow({ kind: 'collection-cycle', collection: collection.id, member: child.id, chain: here.slice(here.indexOf(child.id)) }, `${member.id} at /: collection ${JSON.stringify(child.id)} includes itself`);
              return;
            }
            await walkCollection(child, readers.family, here, mm, false);
          });
        }
      }
    };

    for (const source of sources) this.trust(source.location);
    for (const source of sources) {
      const local = !isUrl(source.location);
      switch (source.kind) {
        case 'manifest':
          await addManifest(source.location, [], source.mmPerCanvasUnit, local);
          break;
        case 'collection':
          await this.guard(local, 'source', source.location, async () => {
            const loaded = await loadJson(source.location, this.fetcher, 'E_COLLECTION_INVALID', local);
            this.document({ location: source.location, kind: 'collection', sha256: loaded.sha256 });
            const readers = readersFor(loaded.doc);
            await walkCollection(this.accept(readers.collection(loaded.doc, source.location), local, source.location), readers.family, [], source.mmPerCanvasUnit, local);
          });
          break;
        case 'annotations':
          this.unbound.push(...(await this.annotationDocument(source.location, this.walkedPages, local)));
          break;
        case 'sheet':
          await this.guard(local, 'source', source.location, async () => {
            const loaded = await loadText(source.location, this.fetcher, 'E_SHEET_INVALID', local);
            this.document({ location: source.location, kind: 'sheet', sha256: loaded.sha256 });
            const sheet = parseSheet(loaded.text, source.location);
            this.unbound.push(...sheet.annotations);
            if (local) for (const m of sheet.manifests) this.trust(m);
            for (const m of sheet.manifests) await addManifest(isUrl(m) ? m : resolvePath(dirname(source.location), m), [], undefined, !isUrl(m) && local);
          });
          break;
      }
    }
  }

  /**
   * Reads a manifest found by the walk again (a second reading: nothing recorded;
   * its bytes come from the cache or its file). It was read once, so a failure
   * now (the cache or the file changed under the run) ends the run with the reason.
   */
  async reread(walked: { location: string; local: boolean; entry: Omit<ManifestEntry, 'manifest'> }): Promise<ManifestEntry> {
    const was = this.recording;
    this.recording = false;
    try {
      const loaded = await loadJson(walked.location, this.fetcher, 'E_MANIFEST_INVALID', walked.local);
      const manifest = readersFor(loaded.doc, walked.entry.family).manifest(loaded.doc, walked.location).value;
      return { ...walked.entry, manifest };
    } catch (err) {
      throw new UsageError(`${redactUrl(walked.location)} was read at the start of this run but cannot be read again (${(err as Error).message}); run again`);
    } finally {
      this.recording = was;
    }
  }

  /** An annotation document and the pages it links to, each read once per `seen`. */
  private async annotationDocument(location: string, seen: Set<string>, local: boolean, scope?: { manifestId: string; family?: DocumentFamily }): Promise<RegionAnnotation[]> {
    const out: RegionAnnotation[] = [];
    const queue = [location];
    while (queue.length > 0) {
      const loc = queue.shift()!;
      if (seen.has(loc)) continue;
      seen.add(loc);
      // A second reading does not ask again for a page that failed the first time.
      if (!this.recording && this.failedLocations.has(loc)) continue;
      if (seen.size > MAX_PAGES) throw new InputError('E_ANNOTATION_INVALID', location, '', `more than ${MAX_PAGES} annotation pages`);
      const isLocal = local && loc === location;
      await this.guard(isLocal, 'source', loc, async () => {
        const loaded = await loadJson(loc, this.fetcher, 'E_ANNOTATION_INVALID', isLocal);
        this.document({ location: loc, kind: 'annotations', sha256: loaded.sha256 });
        const parsed = this.accept(readersFor(loaded.doc, scope?.family).annotations(loaded.doc, loc), isLocal, loc);
        out.push(...parsed.annotations.map((a) => (scope ? { ...a, manifestId: scope.manifestId } : a)));
        queue.push(...parsed.pageRefs.map((ref) => (isUrl(ref) || isUrl(loc) ? new URL(ref, isUrl(loc) ? loc : undefined).toString() : resolvePath(dirname(loc), ref))));
      });
    }
    return out;
  }

  /**
   * The annotations of the pages and lists attached to a manifest and its
   * canvases, bound to it. `pagesSeen` is shared by the manifests of one reading,
   * taken in manifest id order: a page two manifests share belongs to the first.
   */
  async boundAnnotations(entry: ManifestEntry, pagesSeen: Set<string>): Promise<RegionAnnotation[]> {
    const { manifest, family } = entry;
    const out: RegionAnnotation[] = [];
    const local = !isUrl(manifest.source);
    const pages = [...manifest.annotationPages, ...manifest.canvases.flatMap((c) => c.annotationPages)];
    const scope = { manifestId: manifest.id, ...(family ? { family } : {}) };
    for (const page of pages) {
      if (page.embedded !== undefined) {
        await this.guard(local, 'source', manifest.source, async () => {
          const readers = readersFor(page.embedded, family);
          const parsed = this.accept(readers.annotations(page.embedded, manifest.source, page.pointer), local, manifest.source);
          out.push(...parsed.annotations.map((a) => ({ ...a, manifestId: manifest.id })));
        });
      } else if (page.id) {
        out.push(...(await this.annotationDocument(page.id, pagesSeen, false, scope)));
      }
    }
    return out;
  }

  /** Image services of the manifests' canvases: embedded descriptions, else info.json, each fetched once. */
  async services(entries: readonly ManifestEntry[]): Promise<Map<string, ImageService>> {
    const services = new Map<string, ImageService>();
    const refs = new Map<string, { id: string; embedded?: unknown }>();
    for (const { manifest } of entries) for (const c of manifest.canvases) for (const img of c.images) {
      const ref = img.services[0];
      if (ref && !refs.has(ref.id)) refs.set(ref.id, ref);
    }
    await Promise.all(
      [...refs.values()].map(async (ref) => {
        if (this.failedServices.has(ref.id)) return;
        const url = infoJsonUrl(ref.id);
        try {
          if (ref.embedded !== undefined) {
            try {
              services.set(ref.id, parseInfoJson(ref.embedded, url));
              return;
            } catch {
              // An embedded stub without full details: fetch the description.
            }
          }
          const loaded = await this.fetcher.get(url, 'json');
          let doc: unknown;
          try {
            doc = JSON.parse(loaded.body.toString('utf8'));
          } catch (err) {
            throw new InputError('E_INFO_INVALID', url, '', `info.json is not valid JSON (${(err as Error).message})`);
          }
          services.set(ref.id, parseInfoJson(doc, url));
          this.document({ location: url, kind: 'info', sha256: loaded.facts.sha256 });
        } catch (err) {
          // A service that cannot be read loses its images, not the run (its regions are skipped as no-image-service).
          const f = failureFrom('info', ref.id, err);
          if (this.opts.strict) throw err instanceof InputError ? err : new StrictError(`${f.url ?? ref.id}: ${f.reason}`);
          this.failedServices.add(ref.id);
          if (this.recording) this.failures.push(err instanceof InputError ? { ...f, reason: err.pointer === '' ? err.detail : err.message } : f);
        }
      }),
    );
    return services;
  }

  /** Notes canvas ids that several manifests use (it happens in published data); they are kept apart by manifest. */
  noteSharedCanvases(manifests: readonly { id: string; canvasIds: readonly string[] }[]): Set<string> {
    // One owner kept as a string, a list only for an id a second manifest uses (most ids have one owner).
    const owners = new Map<string, string | string[]>();
    for (const m of manifests) {
      for (const c of m.canvasIds) {
        const seen = owners.get(c);
        owners.set(c, seen === undefined ? m.id : typeof seen === 'string' ? [seen, m.id] : (seen.push(m.id), seen));
      }
    }
    const shared = new Set<string>();
    const lists = [...owners].filter((e): e is [string, string[]] => typeof e[1] !== 'string').sort((a, b) => byString(a[0], b[0]));
    for (const [canvasId, ids] of lists) {
      this.notes.push({ kind: 'canvas-id-shared', canvasId, manifests: ids });
      shared.add(canvasId);
    }
    return shared;
  }

  /** The documents, failures and notes in their final order. */
  finished(): Pick<ResolvedSources, 'documents' | 'failures' | 'notes'> {
    const documents = [...this.documents].sort((a, b) => byString(a.location, b.location) || byString(a.kind, b.kind));
    const failures = [...this.failures].sort((a, b) => byString(a.key, b.key) || byString(a.pointer ?? '', b.pointer ?? '') || byString(a.reason, b.reason));
    return { documents: dedupeDocs(documents), failures, notes: this.notes };
  }
}

/** Sorts annotations by id (bound copies before an unbound copy of the same id) and keeps one per id. */
export function uniqueAnnotations(annotations: RegionAnnotation[]): RegionAnnotation[] {
  // Bound annotations sort before unbound copies of the same id, so the copy kept knows its manifest.
  annotations.sort((a, b) => byString(a.id, b.id) || byString(a.manifestId ?? '\uffff', b.manifestId ?? '\uffff'));
  // One annotation may be reachable from two places: keep one.
  return annotations.filter((a, i) => i === 0 || annotations[i - 1].id !== a.id);
}

/**
 * Resolves a recipe's sources at once: every manifest, its annotations and the
 * info.json of its image services (see `SourceReader` for what is read and how
 * problems are treated).
 */
export async function resolveSources(sources: readonly SourceSpec[], fetcher: Fetcher, opts: ResolveOptions = {}): Promise<ResolvedSources> {
  const reader = new SourceReader(fetcher, opts);
  const walked: ManifestEntry[] = [];
  await reader.walk(sources, (m) => walked.push(m.entry));
  // Annotation pages and lists attached to manifests and canvases: their annotations are bound to that manifest.
  const entries = walked.sort((a, b) => byString(a.manifest.id, b.manifest.id));
  const annotations = [...reader.unbound];
  const pagesSeen = new Set(reader.walkedPages);
  for (const entry of entries) annotations.push(...(await reader.boundAnnotations(entry, pagesSeen)));
  reader.noteSharedCanvases(entries.map((e) => ({ id: e.manifest.id, canvasIds: e.manifest.canvases.map((c) => c.id) })));
  const services = await reader.services(entries);
  return { manifests: entries, annotations: uniqueAnnotations(annotations), services, ...reader.finished() };
}

function dedupeDocs(docs: SourceDocument[]): SourceDocument[] {
  return docs.filter((d, i) => i === 0 || docs[i - 1].location !== d.location || docs[i - 1].kind !== d.kind);
}
