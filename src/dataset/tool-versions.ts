import { imageLibraryVersions } from '../image/pixels.ts';
import { VERSION } from '../version.ts';
import type { ToolVersions } from './assemble.ts';

/** The versions this build records in the card and provenance (Node's major version only: no machine detail). */
export function toolVersions(): ToolVersions {
  return { name: 'swatchbook', version: VERSION, ...imageLibraryVersions(), node: process.versions.node.split('.')[0] };
}
