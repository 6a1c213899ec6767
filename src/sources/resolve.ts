import { dirname, resolve as resolvePath } from 'node:path';
import { FailureRecord, failureFrom, FetchError, InputError, SwatchbookError } from '../errors.ts';
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

/**
 * Resolves a recipe's sources: manifests, collections (recursively; a collection
 * that includes itself is followed once and noted), annotation documents
 * (following pages), sheets, the annotation pages and lists manifests reference,
 * and the info.json of every image service painted on their canvases.
 *
 * What the user wrote (files the recipe names, sheets) is strict: a problem
 * throws InputError (exit 2). What comes from a server is lenient: a malformed
 * item is a failure record with URL and JSON Pointer and the rest is used; an
 * unusable document is a failure record for that source. `strict` makes those fatal.
 */
export async function resolveSources(sources: readonly SourceSpec[], fetcher: Fetcher, opts: ResolveOptions = {}): Promise<ResolvedSources> {
  const manifests = new Map<string, ManifestEntry>();
  const annotations: RegionAnnotation[] = [];
  const documents: SourceDocument[] = [];
  const failures: FailureRecord[] = [];
  const notes: SourceNote[] = [];

  const record = (stage: FailureRecord['stage'], key: string, err: unknown) => {
    const f = failureFrom(stage, key, err);
    if (opts.strict) throw err instanceof InputError ? err : new StrictError(`${f.url ?? key}: ${f.reason}`);
    failures.push(f);
  };
  /** Errors from a document the user wrote are fatal; from a server they are records. */
  const guard = async (local: boolean, stage: FailureRecord['stage'], key: string, work: () => Promise<void>) => {
    try {
      await work();
    } catch (err) {
      if (local && !(err instanceof FetchError)) throw err;
      record(stage, key, err);
    }
  };
  /** Uses a lenient reading: problems of a local document throw, remote ones are item records. */
  const accept = <T>(read: Read<T>, local: boolean, key: string): T => {
    if (read.problems.length && (local || opts.strict)) throw read.problems[0];
    for (const p of read.problems) failures.push(failureFrom('item', key, p));
    return read.value;
  };
  /** Hosts named by what the user wrote may be loopback or private (a local image server); see the fetcher's guard. */
  const trust = (location: string | undefined) => {
    if (location && isUrl(location)) fetcher.trustHost(new URL(location).hostname);
  };
  const noteOrThrow = (note: SourceNote, text: string) => {
    if (opts.strict) throw new StrictError(text);
    notes.push(note);
  };

  const addManifest = async (location: string, collections: string[], mm: number | undefined, local: boolean, inherited?: DocumentFamily) =>
    guard(local, 'source', location, async () => {
      const loaded = await loadJson(location, fetcher, 'E_MANIFEST_INVALID', local);
      documents.push({ location, kind: 'manifest', sha256: loaded.sha256 });
      const readers = readersFor(loaded.doc, inherited);
      const manifest = accept(readers.manifest(loaded.doc, location), local, location);
      if (local) {
        for (const c of manifest.canvases) {
          for (const img of c.images) for (const ref of img.services) trust(ref.id);
          for (const page of c.annotationPages) trust(page.id);
        }
        for (const page of manifest.annotationPages) trust(page.id);
      }
      if (!manifests.has(manifest.id)) manifests.set(manifest.id, { manifest, collections, family: readers.family, ...(mm !== undefined ? { mmPerCanvasUnit: mm } : {}) });
    });

  const walkCollection = async (collection: Collection, family: DocumentFamily, chain: string[], mm: number | undefined, local: boolean) => {
    if (chain.length > MAX_DEPTH) throw new InputError('E_COLLECTION_INVALID', collection.source, '', `collections nest deeper than ${MAX_DEPTH}`);
    const here = [...chain, collection.id];
    for (const member of collection.members) {
      if (here.includes(member.id)) {
        const loop = here.slice(here.indexOf(member.id));
        noteOrThrow(
          { kind: 'collection-cycle', collection: collection.id, member: member.id, chain: loop },
          `${collection.source} at ${member.pointer}: collection ${JSON.stringify(member.id)} includes itself (through ${loop.join(' → ')})`,
        );
        continue;
      }
      if (member.kind === 'manifest') {
        await addManifest(member.id, here, mm, false, family);
      } else if (member.embedded !== undefined) {
        await guard(local, 'source', member.id, async () => {
          const readers = READERS[family];
          await walkCollection(accept(readers.collection(member.embedded, collection.source), local, collection.source), family, here, mm, local);
        });
      } else {
        await guard(false, 'source', member.id, async () => {
          const loaded = await loadJson(member.id, fetcher, 'E_COLLECTION_INVALID');
          documents.push({ location: member.id, kind: 'collection', sha256: loaded.sha256 });
          const readers = readersFor(loaded.doc, family);
          const child = accept(readers.collection(loaded.doc, member.id), false, member.id);
          if (child.id !== member.id && here.includes(child.id)) {
            noteOrThrow({ kind: 'collection-cycle', collection: collection.id, member: child.id, chain: here.slice(here.indexOf(child.id)) }, `${member.id} at /: collection ${JSON.stringify(child.id)} includes itself`);
            return;
          }
          await walkCollection(child, readers.family, here, mm, false);
        });
      }
    }
  };

  const addAnnotationDocument = async (location: string, seen: Set<string>, local: boolean, scope?: { manifestId: string; family?: DocumentFamily }) => {
    const queue = [location];
    while (queue.length > 0) {
      const loc = queue.shift()!;
      if (seen.has(loc)) continue;
      seen.add(loc);
      if (seen.size > MAX_PAGES) throw new InputError('E_ANNOTATION_INVALID', location, '', `more than ${MAX_PAGES} annotation pages`);
      const isLocal = local && loc === location;
      await guard(isLocal, 'source', loc, async () => {
        const loaded = await loadJson(loc, fetcher, 'E_ANNOTATION_INVALID', isLocal);
        documents.push({ location: loc, kind: 'annotations', sha256: loaded.sha256 });
        const parsed = accept(readersFor(loaded.doc, scope?.family).annotations(loaded.doc, loc), isLocal, loc);
        annotations.push(...parsed.annotations.map((a) => (scope ? { ...a, manifestId: scope.manifestId } : a)));
        queue.push(...parsed.pageRefs.map((ref) => (isUrl(ref) || isUrl(loc) ? new URL(ref, isUrl(loc) ? loc : undefined).toString() : resolvePath(dirname(loc), ref))));
      });
    }
  };

  const pagesSeen = new Set<string>();
  for (const source of sources) trust(source.location);
  for (const source of sources) {
    const local = !isUrl(source.location);
    switch (source.kind) {
      case 'manifest':
        await addManifest(source.location, [], source.mmPerCanvasUnit, local);
        break;
      case 'collection':
        await guard(local, 'source', source.location, async () => {
          const loaded = await loadJson(source.location, fetcher, 'E_COLLECTION_INVALID', local);
          documents.push({ location: source.location, kind: 'collection', sha256: loaded.sha256 });
          const readers = readersFor(loaded.doc);
          await walkCollection(accept(readers.collection(loaded.doc, source.location), local, source.location), readers.family, [], source.mmPerCanvasUnit, local);
        });
        break;
      case 'annotations':
        await addAnnotationDocument(source.location, pagesSeen, local);
        break;
      case 'sheet':
        await guard(local, 'source', source.location, async () => {
          const loaded = await loadText(source.location, fetcher, 'E_SHEET_INVALID', local);
          documents.push({ location: source.location, kind: 'sheet', sha256: loaded.sha256 });
          const sheet = parseSheet(loaded.text, source.location);
          annotations.push(...sheet.annotations);
          if (local) for (const m of sheet.manifests) trust(m);
          for (const m of sheet.manifests) await addManifest(isUrl(m) ? m : resolvePath(dirname(source.location), m), [], undefined, !isUrl(m) && local);
        });
        break;
    }
  }

  // Annotation pages and lists attached to manifests and canvases: their annotations are bound to that manifest.
  const entries = [...manifests.values()].sort((a, b) => byString(a.manifest.id, b.manifest.id));
  for (const { manifest, family } of entries) {
    const local = !isUrl(manifest.source);
    const pages = [...manifest.annotationPages, ...manifest.canvases.flatMap((c) => c.annotationPages)];
    const scope = { manifestId: manifest.id, ...(family ? { family } : {}) };
    for (const page of pages) {
      if (page.embedded !== undefined) {
        await guard(local, 'source', manifest.source, async () => {
          const readers = readersFor(page.embedded, family);
          const parsed = accept(readers.annotations(page.embedded, manifest.source, page.pointer), local, manifest.source);
          annotations.push(...parsed.annotations.map((a) => ({ ...a, manifestId: manifest.id })));
        });
      } else if (page.id) {
        await addAnnotationDocument(page.id, pagesSeen, false, scope);
      }
    }
  }

  // Canvas ids reused by several manifests (it happens in published data): noted, and kept apart by manifest.
  const owners = new Map<string, string[]>();
  for (const { manifest } of entries) for (const c of manifest.canvases) owners.set(c.id, [...(owners.get(c.id) ?? []), manifest.id]);
  for (const [canvasId, ids] of [...owners.entries()].sort((a, b) => byString(a[0], b[0]))) {
    if (ids.length > 1) notes.push({ kind: 'canvas-id-shared', canvasId, manifests: ids });
  }

  // Image services: embedded descriptions, else info.json, each fetched once.
  const services = new Map<string, ImageService>();
  const refs = new Map<string, { id: string; embedded?: unknown }>();
  for (const { manifest } of entries) for (const c of manifest.canvases) for (const img of c.images) {
    const ref = img.services[0];
    if (ref && !refs.has(ref.id)) refs.set(ref.id, ref);
  }
  await Promise.all(
    [...refs.values()].map(async (ref) => {
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
        const loaded = await fetcher.get(url, 'json');
        let doc: unknown;
        try {
          doc = JSON.parse(loaded.body.toString('utf8'));
        } catch (err) {
          throw new InputError('E_INFO_INVALID', url, '', `info.json is not valid JSON (${(err as Error).message})`);
        }
        services.set(ref.id, parseInfoJson(doc, url));
        documents.push({ location: url, kind: 'info', sha256: loaded.facts.sha256 });
      } catch (err) {
        // A service that cannot be read loses its images, not the run (its regions are skipped as no-image-service).
        const f = failureFrom('info', ref.id, err);
        if (opts.strict) throw err instanceof InputError ? err : new StrictError(`${f.url ?? ref.id}: ${f.reason}`);
        failures.push(err instanceof InputError ? { ...f, reason: err.pointer === '' ? err.detail : err.message } : f);
      }
    }),
  );

  // Bound annotations sort before unbound copies of the same id, so the copy kept knows its manifest.
  annotations.sort((a, b) => byString(a.id, b.id) || byString(a.manifestId ?? '\uffff', b.manifestId ?? '\uffff'));
  documents.sort((a, b) => byString(a.location, b.location) || byString(a.kind, b.kind));
  failures.sort((a, b) => byString(a.key, b.key) || byString(a.pointer ?? '', b.pointer ?? '') || byString(a.reason, b.reason));
  // One annotation may be reachable from two places: keep one.
  const uniqueAnnotations = annotations.filter((a, i) => i === 0 || annotations[i - 1].id !== a.id);
  return { manifests: entries, annotations: uniqueAnnotations, services, documents: dedupeDocs(documents), failures, notes };
}

function dedupeDocs(docs: SourceDocument[]): SourceDocument[] {
  return docs.filter((d, i) => i === 0 || docs[i - 1].location !== d.location || docs[i - 1].kind !== d.kind);
}
