import { readFile } from 'node:fs/promises';
import { InputError } from '../errors.ts';
import { parseJsonText } from '../iiif/json-view.ts';
import type { Fetcher } from '../net/fetcher.ts';
import { sha256Hex } from '../util/hash.ts';

export interface LoadedDocument {
  location: string;
  text: string;
  sha256: string;
  fromNetwork: boolean;
}

export function isUrl(location: string): boolean {
  return /^https?:\/\//i.test(location);
}

/**
 * Reads a document from a URL (through the fetcher: cache, lock, politeness) or,
 * when `allowFile` (locations the recipe or a sheet names), a local file.
 * Locations found inside documents are always URLs: anything else goes to the
 * fetcher, which refuses non-http schemes with a recorded reason.
 */
export async function loadText(location: string, fetcher: Fetcher, code: 'E_MANIFEST_INVALID' | 'E_ANNOTATION_INVALID' | 'E_SHEET_INVALID' | 'E_COLLECTION_INVALID', allowFile = false): Promise<LoadedDocument> {
  if (isUrl(location) || !allowFile) {
    const got = await fetcher.get(location, 'json');
    return { location, text: got.body.toString('utf8'), sha256: got.facts.sha256, fromNetwork: true };
  }
  let buf: Buffer;
  try {
    buf = await readFile(location);
  } catch (err) {
    throw new InputError(code, location, '', `cannot read the file (${(err as NodeJS.ErrnoException).code ?? (err as Error).message})`);
  }
  return { location, text: buf.toString('utf8'), sha256: sha256Hex(buf), fromNetwork: false };
}

export async function loadJson(location: string, fetcher: Fetcher, code: 'E_MANIFEST_INVALID' | 'E_ANNOTATION_INVALID' | 'E_COLLECTION_INVALID', allowFile = false): Promise<{ doc: unknown } & LoadedDocument> {
  const loaded = await loadText(location, fetcher, code, allowFile);
  return { ...loaded, doc: parseJsonText(loaded.text, location, code) };
}
