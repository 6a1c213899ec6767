import { readAnnotationList } from '../annotation/open-annotation.ts';
import { AnnotationDocument, readAnnotationDocument } from '../annotation/web-annotation.ts';
import { JsonView } from '../iiif/json-view.ts';
import type { Read } from '../iiif/problems.ts';
import { Collection, Manifest, readCollection, readManifest } from '../iiif/presentation.ts';
import { isPresentation2, readCollection2, readManifest2 } from '../iiif/presentation2.ts';

/** The document families swatchbook reads. */
export type DocumentFamily = 'presentation3' | 'presentation2';

/**
 * The readers of one family. Each is pure and lenient: it returns what it could
 * use and the problems of single items; it throws InputError only when the whole
 * document is unusable. See `README.md` in this folder for adding a family.
 */
export interface DocumentReaders {
  family: DocumentFamily;
  manifest(doc: unknown, source: string): Read<Manifest>;
  collection(doc: unknown, source: string): Read<Collection>;
  annotations(doc: unknown, source: string, pointer?: string): Read<AnnotationDocument>;
}

export const READERS: Record<DocumentFamily, DocumentReaders> = {
  presentation3: { family: 'presentation3', manifest: readManifest, collection: readCollection, annotations: readAnnotationDocument },
  presentation2: { family: 'presentation2', manifest: readManifest2, collection: readCollection2, annotations: readAnnotationList },
};

/** An annotation written in Open Annotation JSON (P2 context keys `on`/`resource`, or an `oa:` type). */
function looksOpenAnnotation(view: JsonView): boolean {
  return view.isObject() && (view.has('on') || view.has('resource') || view.types().some((t) => t.trim().startsWith('oa:')));
}

/**
 * Which family a document belongs to: Presentation 2.x/1.0 by its `@context` or
 * `sc:` types, an annotation list by its Open Annotation shape; otherwise 3.0.
 * `inherited` is the family of the document that embeds or references this one
 * (an embedded P2 sub-collection has no `@context` of its own: P2.1 §4.5).
 */
export function familyOf(doc: unknown, inherited?: DocumentFamily): DocumentFamily {
  const view = JsonView.of(doc, '', 'E_MANIFEST_INVALID');
  if (view.isArray()) {
    const first = view.items()[0];
    return first && looksOpenAnnotation(first) ? 'presentation2' : first ? 'presentation3' : inherited ?? 'presentation3';
  }
  if (!view.isObject()) return inherited ?? 'presentation3';
  if (isPresentation2(view) || looksOpenAnnotation(view)) return 'presentation2';
  if (view.has('@context') || view.has('type')) return 'presentation3';
  return inherited ?? 'presentation3';
}

export function readersFor(doc: unknown, inherited?: DocumentFamily): DocumentReaders {
  return READERS[familyOf(doc, inherited)];
}
