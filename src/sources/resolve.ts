import { dirname, resolve as resolvePath } from 'node:path';
import { FetchError, InputError } from '../errors.ts';
import type { FailureRecord } from '../harvest/harvest.ts';
import { ImageService, parseInfoJson } from '../iiif/image-service.ts';
import { infoJsonUrl } from '../iiif/image-url.ts';
import { Collection, Manifest, parseCollection, parseManifest } from '../iiif/presentation.ts';
import type { Fetcher } from '../net/fetcher.ts';
import { parseAnnotationDocument, RegionAnnotation } from '../annotation/web-annotation.ts';
import type { SourceSpec } from '../recipe/types.ts';
import { byString } from '../util/hash.ts';
import { isUrl, loadJson, loadText } from './load-document.ts';
import { parseSheet } from './sheet.ts';

export interface ManifestEntry {
  manifest: Manifest;
  /** Collections (ids) through which the manifest was reached, outermost first. */
  collections: string[];
  mmPerCanvasUnit?: number;
}

export interface SourceDocument {
  location: string;
  kind: 'manifest' | 'collection' | 'annotations' | 'sheet' | 'info';
  sha256: string;
}

export interface ResolvedSources {
  manifests: ManifestEntry[];
  annotations: RegionAnnotation[];
  /** Image services by the id their references use. */
  services: Map<string, ImageService>;
  documents: SourceDocument[];
  failures: FailureRecord[];
}

const MAX_DEPTH = 16;
const MAX_PAGES = 10_000;

/**
 * Resolves a recipe's sources: manifests, collections (recursively, cycle-safe),
 * annotation documents (following pages), sheets, the annotation pages manifests
 * reference, and the info.json of every image service painted on their canvases.
 * A malformed document is an InputError (exit 2); a document or service that
 * cannot be fetched is a failure record and the rest proceeds.
 */
export async function resolveSources(sources: readonly SourceSpec[], fetcher: Fetcher): Promise<ResolvedSources> {
  const manifests = new Map<string, ManifestEntry>();
  const annotations: RegionAnnotation[] = [];
  const documents: SourceDocument[] = [];
  const failures: FailureRecord[] = [];
  const fail = (stage: FailureRecord['stage'], key: string, err: unknown) => {
    if (!(err instanceof FetchError)) throw err;
    failures.push({ stage, key, url: err.url, ...(err.status !== undefined ? { status: err.status } : {}), attempts: err.attempts, reason: err.reason });
  };

  const addManifest = async (location: string, collections: string[], mm?: number, allowFile = false) => {
    try {
      const loaded = await loadJson(location, fetcher, 'E_MANIFEST_INVALID', allowFile);
      documents.push({ location, kind: 'manifest', sha256: loaded.sha256 });
      const manifest = parseManifest(loaded.doc, location);
      const prev = manifests.get(manifest.id);
      if (!prev) manifests.set(manifest.id, { manifest, collections, ...(mm !== undefined ? { mmPerCanvasUnit: mm } : {}) });
    } catch (err) {
      fail('source', location, err);
    }
  };

  const walkCollection = async (collection: Collection, chain: string[], mm: number | undefined, pointerBase: string) => {
    if (chain.length > MAX_DEPTH) throw new InputError('E_COLLECTION_INVALID', collection.source, pointerBase, `collections nest deeper than ${MAX_DEPTH}`);
    const here = [...chain, collection.id];
    for (const member of collection.members) {
      if (here.includes(member.id)) {
        throw new InputError('E_COLLECTION_INVALID', collection.source, member.pointer, `collection ${JSON.stringify(member.id)} includes itself (through ${here.slice(here.indexOf(member.id)).join(' → ')})`);
      }
      if (member.kind === 'manifest') {
        await addManifest(member.id, here, mm);
      } else if (member.embedded !== undefined) {
        await walkCollection(parseCollection(member.embedded, collection.source), here, mm, member.pointer);
      } else {
        try {
          const loaded = await loadJson(member.id, fetcher, 'E_COLLECTION_INVALID');
          documents.push({ location: member.id, kind: 'collection', sha256: loaded.sha256 });
          const child = parseCollection(loaded.doc, member.id);
          if (child.id !== member.id && here.includes(child.id)) {
            throw new InputError('E_COLLECTION_INVALID', member.id, '/id', `collection ${JSON.stringify(child.id)} includes itself`);
          }
          await walkCollection(child, here, mm, '');
        } catch (err) {
          fail('source', member.id, err);
        }
      }
    }
  };

  const addAnnotationDocument = async (location: string, seen: Set<string>, allowFile = false) => {
    const queue = [location];
    while (queue.length > 0) {
      const loc = queue.shift()!;
      if (seen.has(loc)) continue;
      seen.add(loc);
      if (seen.size > MAX_PAGES) throw new InputError('E_ANNOTATION_INVALID', location, '', `more than ${MAX_PAGES} annotation pages`);
      try {
        const loaded = await loadJson(loc, fetcher, 'E_ANNOTATION_INVALID', allowFile && loc === location);
        documents.push({ location: loc, kind: 'annotations', sha256: loaded.sha256 });
        const parsed = parseAnnotationDocument(loaded.doc, loc);
        annotations.push(...parsed.annotations);
        queue.push(...parsed.pageRefs.map((ref) => (isUrl(ref) || isUrl(loc) ? new URL(ref, isUrl(loc) ? loc : undefined).toString() : resolvePath(dirname(loc), ref))));
      } catch (err) {
        fail('source', loc, err);
      }
    }
  };

  const pagesSeen = new Set<string>();
  for (const source of sources) {
    switch (source.kind) {
      case 'manifest':
        await addManifest(source.location, [], source.mmPerCanvasUnit, true);
        break;
      case 'collection':
        try {
          const loaded = await loadJson(source.location, fetcher, 'E_COLLECTION_INVALID', true);
          documents.push({ location: source.location, kind: 'collection', sha256: loaded.sha256 });
          await walkCollection(parseCollection(loaded.doc, source.location), [], source.mmPerCanvasUnit, '');
        } catch (err) {
          fail('source', source.location, err);
        }
        break;
      case 'annotations':
        await addAnnotationDocument(source.location, pagesSeen, true);
        break;
      case 'sheet': {
        try {
          const loaded = await loadText(source.location, fetcher, 'E_SHEET_INVALID', true);
          documents.push({ location: source.location, kind: 'sheet', sha256: loaded.sha256 });
          const sheet = parseSheet(loaded.text, source.location);
          annotations.push(...sheet.annotations);
          for (const m of sheet.manifests) await addManifest(isUrl(m) ? m : resolvePath(dirname(source.location), m), [], undefined, !isUrl(source.location));
        } catch (err) {
          fail('source', source.location, err);
        }
        break;
      }
    }
  }

  // Annotation pages attached to manifests and canvases.
  const entries = [...manifests.values()].sort((a, b) => byString(a.manifest.id, b.manifest.id));
  for (const { manifest } of entries) {
    const pages = [...manifest.annotationPages, ...manifest.canvases.flatMap((c) => c.annotationPages)];
    for (const page of pages) {
      if (page.embedded !== undefined) {
        annotations.push(...parseAnnotationDocument(page.embedded, manifest.source, page.pointer).annotations);
      } else if (page.id) {
        await addAnnotationDocument(page.id, pagesSeen);
      }
    }
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
        const doc = JSON.parse(loaded.body.toString('utf8')) as unknown;
        services.set(ref.id, parseInfoJson(doc, url));
        documents.push({ location: url, kind: 'info', sha256: loaded.facts.sha256 });
      } catch (err) {
        if (err instanceof SyntaxError) {
          failures.push({ stage: 'info', key: ref.id, url, reason: `info.json is not valid JSON (${err.message})` });
          return;
        }
        if (err instanceof InputError) {
          failures.push({ stage: 'info', key: ref.id, url, reason: err.message });
          return;
        }
        fail('info', ref.id, err);
      }
    }),
  );

  annotations.sort((a, b) => byString(a.id, b.id));
  documents.sort((a, b) => byString(a.location, b.location) || byString(a.kind, b.kind));
  failures.sort((a, b) => byString(a.key, b.key) || byString(a.reason, b.reason));
  // One annotation may be reachable from two places: keep one.
  const uniqueAnnotations = annotations.filter((a, i) => i === 0 || annotations[i - 1].id !== a.id);
  return { manifests: entries, annotations: uniqueAnnotations, services, documents: dedupeDocs(documents), failures };
}

function dedupeDocs(docs: SourceDocument[]): SourceDocument[] {
  return docs.filter((d, i) => i === 0 || docs[i - 1].location !== d.location || docs[i - 1].kind !== d.kind);
}
