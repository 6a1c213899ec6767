import { SPLITS, SplitName } from '../split/assign.ts';
import { byString } from '../util/hash.ts';
import type { WrittenFile } from '../util/text-file.ts';
import type { Card } from './card.ts';
import type { IndexRecord } from './records.ts';

/**
 * Files that let common loaders read the dataset as it is (pure: texts in, texts out).
 *
 * - `patches/<split>/metadata.jsonl`: the metadata file of an image folder loader
 *   (one JSON object per image, `file_name` relative to the metadata file's folder).
 *   A metadata file switches off labels from folder names in such loaders, so the
 *   label column is written here; the provenance columns come with it.
 * - `croissant.json`: a Croissant 1.0 description (MLCommons; JSON-LD) with the
 *   Responsible-AI properties, distribution entries with sha256, and record sets.
 */

/** One line of `patches/<split>/metadata.jsonl`. Keys in this order. */
export function metadataLine(r: IndexRecord): string {
  return JSON.stringify({
    file_name: `${r.label}/${r.id}.png`,
    label: r.label,
    patch_id: r.id,
    kind: r.kind,
    group: r.group,
    manifest: r.manifest,
    canvas: r.canvas,
    annotation: r.annotation,
    rights: r.rights,
    required_statement: r.requiredStatement ? `${r.requiredStatement.label}: ${r.requiredStatement.value}` : null,
    source_urls: r.requests,
    sha256: r.sha256,
  });
}

/**
 * The lines of each metadata file (without newlines) by dataset-relative path,
 * for the splits that hold patches. Each file's lines are made as they are
 * read (a split of a million patches is not held as text).
 */
export function splitMetadataLines(records: readonly IndexRecord[]): Map<string, Iterable<string>> {
  const out = new Map<string, Iterable<string>>();
  for (const s of SPLITS) {
    if (!records.some((r) => r.split === s)) continue;
    out.set(`patches/${s}/metadata.jsonl`, {
      *[Symbol.iterator]() {
        // Sorted by the file name, `<label>/<id>.png` ("oak-dark/…" before "oak/…").
        const inSplit = records.filter((r) => r.split === s).map((r) => ({ key: `${r.label}/${r.id}`, r }));
        inSplit.sort((a, b) => byString(a.key, b.key));
        for (const { r } of inSplit) yield metadataLine(r);
      },
    });
  }
  return out;
}

/** The Croissant 1.0 context (Croissant 1.0 Appendix 1; the `rai` prefix from the RAI 1.0 vocabulary). */
export const CROISSANT_CONTEXT = {
  '@language': 'en',
  '@vocab': 'https://schema.org/',
  citeAs: 'cr:citeAs',
  column: 'cr:column',
  conformsTo: 'dct:conformsTo',
  cr: 'http://mlcommons.org/croissant/',
  rai: 'http://mlcommons.org/croissant/RAI/',
  data: { '@id': 'cr:data', '@type': '@json' },
  dataType: { '@id': 'cr:dataType', '@type': '@vocab' },
  dct: 'http://purl.org/dc/terms/',
  examples: { '@id': 'cr:examples', '@type': '@json' },
  extract: 'cr:extract',
  field: 'cr:field',
  fileProperty: 'cr:fileProperty',
  fileObject: 'cr:fileObject',
  fileSet: 'cr:fileSet',
  format: 'cr:format',
  includes: 'cr:includes',
  isLiveDataset: 'cr:isLiveDataset',
  jsonPath: 'cr:jsonPath',
  key: 'cr:key',
  md5: 'cr:md5',
  parentField: 'cr:parentField',
  path: 'cr:path',
  recordSet: 'cr:recordSet',
  references: 'cr:references',
  regex: 'cr:regex',
  repeated: 'cr:repeated',
  replace: 'cr:replace',
  sc: 'https://schema.org/',
  separator: 'cr:separator',
  source: 'cr:source',
  subField: 'cr:subField',
  transform: 'cr:transform',
} as const;

const SPLIT_URL: Record<SplitName, string> = { train: 'cr:TrainingSplit', val: 'cr:ValidationSplit', test: 'cr:TestSplit' };

export interface CroissantInput {
  card: Card;
  description: string;
  records: readonly IndexRecord[];
  /** Files of the dataset by relative path (index.jsonl, the metadata files, card.json, shards…) with their digests, to list. */
  files: ReadonlyMap<string, WrittenFile>;
  contact?: string;
}

const MIME: Record<string, string> = { '.tar': 'application/x-tar', '.jsonl': 'application/jsonlines', '.json': 'application/json', '.md': 'text/markdown', '.txt': 'text/plain', '.jsonld': 'application/ld+json' };

/**
 * The Croissant 1.0 description. Deterministic: no date of publication is
 * written (a wall-clock date would break byte-identical rebuilds; add it when you
 * publish), and every listed file carries the sha256 of its bytes.
 */
export function croissantDocument(i: CroissantInput): Record<string, unknown> {
  const card = i.card;
  const licences = [...new Set(i.records.map((r) => r.rights).filter((r): r is string => !!r))].sort(byString);
  const fileObjects = [...i.files.entries()].sort((a, b) => byString(a[0], b[0])).map(([path, file]) => ({
    '@type': 'cr:FileObject',
    '@id': path,
    name: path,
    contentUrl: path,
    contentSize: `${file.size} B`,
    encodingFormat: MIME[path.slice(path.lastIndexOf('.'))] ?? 'application/octet-stream',
    sha256: file.sha256,
  }));
  const fromIndex = (id: string, column: string, dataType: unknown, extra: Record<string, unknown> = {}) => ({
    '@type': 'cr:Field',
    '@id': `patches/${id}`,
    name: id,
    dataType,
    source: { fileObject: { '@id': 'index.jsonl' }, extract: { column } },
    ...extra,
  });
  const splitsPresent = SPLITS.filter((s) => i.records.some((r) => r.split === s));
  const annotators = [...new Set(i.records.map((r) => r.annotator).filter((a): a is string => !!a))].sort(byString);
  const c = card.composition;
  return {
    '@context': CROISSANT_CONTEXT,
    '@type': 'sc:Dataset',
    conformsTo: ['http://mlcommons.org/croissant/1.0', 'http://mlcommons.org/croissant/RAI/1.0'],
    name: card.name,
    description: i.description || `Fixed-scale texture patches (${c.classes.join(', ')}) cut from IIIF images by swatchbook.`,
    license: licences,
    url: `urn:swatchbook:dataset:${encodeURIComponent(card.name)}`,
    creator: { '@type': 'sc:Organization', name: `the makers of ${card.name}`, ...(i.contact ? { url: i.contact } : {}) },
    keywords: ['texture', 'painted materials', 'IIIF', ...c.classes],
    isLiveDataset: false,
    distribution: [
      ...fileObjects,
      { '@type': 'cr:FileSet', '@id': 'patch-files', name: 'patch-files', encodingFormat: 'image/png', includes: 'patches/*/*/*.png' },
    ],
    recordSet: [
      {
        '@type': 'cr:RecordSet',
        '@id': 'splits',
        name: 'splits',
        dataType: 'cr:Split',
        key: { '@id': 'splits/name' },
        field: [
          { '@type': 'cr:Field', '@id': 'splits/name', name: 'name', dataType: 'sc:Text' },
          { '@type': 'cr:Field', '@id': 'splits/url', name: 'url', dataType: 'sc:URL' },
        ],
        data: splitsPresent.map((s) => ({ 'splits/name': s, 'splits/url': SPLIT_URL[s] })),
      },
      {
        '@type': 'cr:RecordSet',
        '@id': 'patches',
        name: 'patches',
        description: 'One record per patch: the image, its class, split, group, rights and the exact image requests it was cut from.',
        key: { '@id': 'patches/id' },
        field: [
          fromIndex('id', 'id', 'sc:Text'),
          {
            '@type': 'cr:Field',
            '@id': 'patches/image',
            name: 'image',
            dataType: 'sc:ImageObject',
            source: { fileSet: { '@id': 'patch-files' }, extract: { fileProperty: 'content' } },
          },
          fromIndex('file', 'file', 'sc:Text'),
          fromIndex('label', 'label', ['sc:Text', 'cr:Label']),
          fromIndex('split', 'split', 'sc:Text', { references: { field: { '@id': 'splits/name' } } }),
          fromIndex('group', 'group', 'sc:Text'),
          fromIndex('rights', 'rights', 'sc:URL'),
          fromIndex('source_urls', 'requests', 'sc:URL', { repeated: true }),
          fromIndex('sha256', 'sha256', 'sc:Text'),
        ],
      },
    ],
    'rai:dataCollection': `Harvested from IIIF image servers by swatchbook ${card.collection.tool.version} with seed ${card.collection.seed}: regions from web annotations, crops requested at a fixed scale, cut into ${card.collection.patch.size}-px patches. Every request and response hash is in lock.json.`,
    'rai:dataCollectionType': 'Web API',
    'rai:dataCollectionMissingData': `${c.failures.count} failure(s) recorded in failures.jsonl; ${c.failures.droppedPatches} planned patch(es) dropped with them; skipped regions by reason: ${Object.entries(c.regions.skipped).map(([k, v]) => `${k} ${v}`).join(', ') || 'none'}.`,
    'rai:dataPreprocessingProtocol': card.preprocessing.join(' '),
    'rai:dataAnnotationProtocol': 'Labels come from the sources\' web annotations, mapped to classes by the recipe\'s label map; negatives are unlabelled areas at least the recipe margin away from every annotated area.',
    'rai:dataAnnotationPlatform': 'W3C Web Annotation / Open Annotation documents published with IIIF manifests, or sheets the dataset makers wrote.',
    'rai:annotatorDemographics': annotators.length ? `Annotators named by the sources: ${annotators.join(', ')}. Nothing else is known of them.` : 'The sources name no annotators.',
    'rai:dataLimitations': card.uses.slice(1).join(' '),
    'rai:dataUseCases': card.uses[0],
    'rai:dataBiases': 'Regions are what annotators chose to mark on the pictures the recipe names; classes and splits follow those choices (see card.md for the realised shares).',
    'rai:personalSensitiveInformation': 'Texture patches of painted surfaces; rights statements and attributions are copied from the sources (ATTRIBUTION.md). This is not legal advice.',
    'rai:dataReleaseMaintenancePlan': `${card.maintenance.rerun} ${card.maintenance.verify}`,
  };
}
