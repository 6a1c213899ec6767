/**
 * The recipe's JSON Schema: the single source of truth for field names, types,
 * ranges and defaults. `schema/recipe.schema.json` and the README's recipe
 * reference are generated from it (a test fails when they are stale).
 */
const positiveInt = (description: string, def?: number, max?: number) => ({ type: 'integer', minimum: 1, ...(max ? { maximum: max } : {}), ...(def !== undefined ? { default: def } : {}), description });

const sourceCommon = {
  mmPerCanvasUnit: { type: 'number', exclusiveMinimum: 0, description: 'Millimetres per canvas unit for this source, used for `scale.pixelsPerMm` when its canvases and images carry no physical dimensions service.' },
};

export const recipeSchema = {
  $schema: 'http://json-schema.org/draft-07/schema#',
  $id: 'https://swatchbook.invalid/schema/recipe.schema.json',
  title: 'swatchbook recipe',
  description: 'What to harvest from IIIF sources and how to cut it into a texture-patch dataset.',
  type: 'object',
  additionalProperties: false,
  required: ['name', 'sources', 'labels', 'scale'],
  properties: {
    name: { type: 'string', pattern: '^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$', description: 'Dataset name: letters, digits, `.`, `_`, `-`; used in file names.' },
    description: { type: 'string', default: '', description: 'Why the dataset exists; becomes the card\'s motivation.' },
    seed: { type: ['string', 'integer'], default: 'swatchbook', description: 'Seed of every random choice (negatives, splits, retry jitter).' },
    sources: {
      type: 'array',
      minItems: 1,
      description: 'Where regions come from: IIIF manifests and collections (their annotations included), W3C annotation documents, CSV sheets. URLs or paths relative to the recipe.',
      items: {
        oneOf: [
          { type: 'object', additionalProperties: false, required: ['manifest'], properties: { manifest: { type: 'string', minLength: 1, description: 'Source kind (one per source): a Presentation 3 manifest.' }, ...sourceCommon } },
          { type: 'object', additionalProperties: false, required: ['collection'], properties: { collection: { type: 'string', minLength: 1, description: 'Source kind: a Presentation 3 collection, followed recursively.' }, ...sourceCommon } },
          { type: 'object', additionalProperties: false, required: ['annotations'], properties: { annotations: { type: 'string', minLength: 1, description: 'Source kind: a W3C AnnotationPage, AnnotationCollection or array of annotations.' } } },
          { type: 'object', additionalProperties: false, required: ['sheet'], properties: { sheet: { type: 'string', minLength: 1, description: 'Source kind: a CSV file with columns manifest, canvas, xywh, svg, label, group.' } } },
        ],
      },
    },
    labels: {
      type: 'object',
      minProperties: 1,
      description: 'Class name → accepted annotation body values or URIs (synonyms map to one class; matching ignores case and extra spaces).',
      propertyNames: { pattern: '^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$' },
      additionalProperties: { type: 'array', items: { type: 'string', minLength: 1 } },
    },
    scale: {
      description: 'Fixed output scale: pixels per canvas unit, or pixels per millimetre of the object.',
      oneOf: [
        { type: 'object', additionalProperties: false, required: ['pixelsPerCanvasUnit'], properties: { pixelsPerCanvasUnit: { type: 'number', exclusiveMinimum: 0, maximum: 64 } } },
        { type: 'object', additionalProperties: false, required: ['pixelsPerMm'], properties: { pixelsPerMm: { type: 'number', exclusiveMinimum: 0, maximum: 1000 } } },
      ],
    },
    patch: {
      type: 'object',
      additionalProperties: false,
      default: {},
      description: 'Square patches cut from each region.',
      properties: {
        size: positiveInt('Patch side in pixels.', 128, 4096),
        stride: positiveInt('Step between patch origins in pixels (defaults to size; at most 4 × size).', undefined, 16384),
        minCoverage: { type: 'number', minimum: 0, maximum: 1, default: 0.9, description: 'Share of a patch that must lie inside the region for a positive (pixel-centre rule).' },
      },
    },
    negatives: {
      type: 'object',
      additionalProperties: false,
      default: {},
      description: 'Background patches that touch no labelled region.',
      properties: {
        ratio: { type: 'number', minimum: 0, maximum: 100, default: 1, description: 'Negatives = ratio × the positive count of the average class (1 = a class among equals; 0 = none).' },
        margin: { type: 'integer', minimum: 0, maximum: 100000, default: 16, description: 'Distance in output pixels a negative keeps from every labelled region.' },
        label: { type: 'string', pattern: '^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$', default: 'background', description: 'Class name of negatives.' },
      },
    },
    split: {
      type: 'object',
      additionalProperties: false,
      default: {},
      description: 'Group-aware, balanced, stable train/validation/test assignment (see the README, "How splits are made").',
      properties: {
        fractions: {
          type: 'object',
          additionalProperties: false,
          required: ['train', 'val', 'test'],
          default: { train: 0.8, val: 0.1, test: 0.1 },
          properties: { train: { type: 'number', minimum: 0, maximum: 1 }, val: { type: 'number', minimum: 0, maximum: 1 }, test: { type: 'number', minimum: 0, maximum: 1 } },
          description: 'Target share of each class\'s patches per split (whole groups go to one split); must sum to 1.',
        },
        groupBy: { enum: ['manifest', 'canvas', 'annotation'], default: 'canvas', description: 'What keeps patches together in one split.' },
      },
    },
    dedupe: {
      type: 'object',
      additionalProperties: false,
      default: {},
      description: 'Near-duplicate detection by 64-bit difference hash.',
      properties: { maxDistance: { type: 'integer', minimum: 0, maximum: 16, default: 4, description: 'Hamming distance at or below which two textured patches are near-duplicates.' } },
    },
    request: {
      type: 'object',
      additionalProperties: false,
      default: {},
      description: 'What to ask image servers for.',
      properties: {
        format: { enum: ['jpg', 'png'], default: 'png', description: 'Preferred format; falls back to jpg where png is not offered (recorded).' },
        quality: { enum: ['default', 'color'], default: 'default', description: 'IIIF quality.' },
      },
    },
    network: {
      type: 'object',
      additionalProperties: false,
      default: {},
      description: 'Politeness and limits. Defaults are small on purpose: these are other people\'s servers.',
      properties: {
        contact: { type: 'string', description: 'E-mail or URL put in the User-Agent so server staff can reach you.' },
        concurrency: positiveInt('Requests in flight in all.', 4, 64),
        perHost: positiveInt('Requests in flight to one host.', 2, 16),
        perHostRate: { type: 'number', exclusiveMinimum: 0, maximum: 1000, default: 4, description: 'Request starts per second to one host.' },
        timeoutMs: positiveInt('Timeout of one request in milliseconds.', 30000, 600000),
        retries: { type: 'integer', minimum: 0, maximum: 10, default: 4, description: 'Retries after the first attempt for transient failures.' },
        allowHosts: { type: 'array', items: { type: 'string', minLength: 1 }, description: 'If set, only these hosts (or `*.suffix`) are contacted, also after redirects.' },
      },
    },
    rights: {
      type: 'object',
      additionalProperties: false,
      default: {},
      description: 'Rights filter.',
      properties: { allow: { type: 'array', items: { type: 'string', minLength: 1 }, description: 'Rights URIs or prefixes accepted; sources with other or no rights are excluded and counted in the card.' } },
    },
    shards: {
      type: 'object',
      additionalProperties: false,
      description: 'Also write WebDataset-style tar shards (`shards/<split>/<split>-NNNNN.tar`, `<id>.png` beside `<id>.json` per patch, byte-deterministic). Absent: no shards (`--format tar` on the command line asks for them too).',
      properties: { patchesPerShard: positiveInt('Patches per shard.', 1000, 1000000) },
    },
    output: { type: 'string', minLength: 1, description: 'Dataset folder (default `<name>-dataset` beside the recipe).' },
  },
} as const;

/** The schema's defaults for `network`: the one place runtime politeness defaults come from. */
export function networkDefaults(): { concurrency: number; perHost: number; perHostRate: number; timeoutMs: number; retries: number } {
  const p = recipeSchema.properties.network.properties;
  return { concurrency: p.concurrency.default!, perHost: p.perHost.default!, perHostRate: p.perHostRate.default, timeoutMs: p.timeoutMs.default!, retries: p.retries.default };
}
