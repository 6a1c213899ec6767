import { readFile } from 'node:fs/promises';
import { dirname, isAbsolute, resolve } from 'node:path';
import type { ErrorObject } from 'ajv';
import { InputError, describeValue } from '../errors.ts';
import { escapePointerToken, parseJsonText } from '../iiif/json-view.ts';
import type { Recipe, SourceSpec } from './types.ts';

import { validate as generatedValidate } from './validate-recipe.generated.ts';

/** The recipe schema's validator, precompiled by `npm run docs` (ajv standalone code, defaults filled in place). */
const validate = generatedValidate as unknown as ((doc: unknown) => boolean) & { errors?: ErrorObject[] | null };

function valueAt(doc: unknown, pointer: string): unknown {
  let cur: unknown = doc;
  for (const raw of pointer.split('/').slice(1)) {
    const key = raw.replace(/~1/g, '/').replace(/~0/g, '~');
    if (cur === null || typeof cur !== 'object') return undefined;
    cur = (cur as Record<string, unknown>)[key];
  }
  return cur;
}

/** Picks the most useful ajv error and words it as "<file> at <pointer>: <detail>". */
function firstError(errors: ErrorObject[], doc: unknown, file: string): InputError {
  // oneOf failures come with the errors of every branch; report the branch that got furthest.
  const ranked = [...errors].sort((a, b) => rank(a) - rank(b) || b.instancePath.length - a.instancePath.length);
  const e = ranked[0];
  let pointer = e.instancePath;
  let detail: string;
  switch (e.keyword) {
    case 'additionalProperties': {
      const key = (e.params as { additionalProperty: string }).additionalProperty;
      pointer = `${pointer}/${escapePointerToken(key)}`;
      detail = `unknown key ${JSON.stringify(key)}`;
      break;
    }
    case 'required':
      pointer = `${pointer}/${escapePointerToken((e.params as { missingProperty: string }).missingProperty)}`;
      detail = 'is required';
      break;
    case 'type':
      detail = `expected ${(e.params as { type: string }).type}, got ${describeValue(valueAt(doc, pointer))}`;
      break;
    case 'enum':
      detail = `expected one of ${(e.params as { allowedValues: unknown[] }).allowedValues.map((v) => JSON.stringify(v)).join(', ')}, got ${describeValue(valueAt(doc, pointer))}`;
      break;
    case 'oneOf':
      detail = pointer.startsWith('/sources')
        ? 'expected exactly one of "manifest", "collection", "annotations" or "sheet"'
        : 'expected exactly one of "pixelsPerCanvasUnit" or "pixelsPerMm"';
      break;
    case 'minItems':
      detail = `expected at least ${(e.params as { limit: number }).limit} item(s), got ${describeValue(valueAt(doc, pointer))}`;
      break;
    case 'minProperties':
      detail = `expected at least ${(e.params as { limit: number }).limit} entry, got an empty object`;
      break;
    case 'minimum':
    case 'maximum':
    case 'exclusiveMinimum':
    case 'exclusiveMaximum': {
      const p = e.params as { comparison: string; limit: number };
      detail = `expected a number ${p.comparison} ${p.limit}, got ${describeValue(valueAt(doc, pointer))}`;
      break;
    }
    default:
      detail = `${e.message ?? 'is invalid'}, got ${describeValue(valueAt(doc, pointer))}`;
  }
  return new InputError('E_RECIPE_INVALID', file, pointer, detail);
}

function rank(e: ErrorObject): number {
  if (e.keyword === 'additionalProperties' && /^\/(sources\/\d+|scale)$/.test(e.instancePath)) return 3; // branch noise
  if (e.keyword === 'required' && /^\/(sources\/\d+|scale)$/.test(e.instancePath)) return 3;
  if (e.keyword === 'oneOf') return 2;
  return 1;
}

/**
 * Validates a parsed recipe against the schema, fills defaults, checks the rules
 * a schema cannot say, and resolves relative locations against `baseDir`.
 * Throws InputError (exit code 2) naming `file` and the JSON location.
 */
export function normaliseRecipe(doc: unknown, file: string, baseDir: string): Recipe {
  const copy = structuredClone(doc);
  if (!validate(copy)) throw firstError(validate.errors ?? [], copy, file);
  const r = copy as Record<string, any>;
  const fail = (pointer: string, detail: string): never => {
    throw new InputError('E_RECIPE_INVALID', file, pointer, detail);
  };
  const { train, val, test } = r.split.fractions;
  if (Math.abs(train + val + test - 1) > 1e-6) fail('/split/fractions', `train + val + test must be 1, got ${+(train + val + test).toFixed(6)}`);
  if (train === 0) fail('/split/fractions/train', 'the train fraction must be above 0');
  const size: number = r.patch.size;
  const stride: number = r.patch.stride ?? size;
  if (stride > size * 4) fail('/patch/stride', `stride ${stride} is larger than 4 × size (${size * 4}), which leaves most of each region unused`);
  if (r.labels[r.negatives.label] !== undefined && r.negatives.ratio > 0) fail(`/labels/${escapePointerToken(r.negatives.label)}`, `"${r.negatives.label}" is the negatives' label and cannot also be a class`);
  for (const [cls, values] of Object.entries(r.labels as Record<string, string[]>)) {
    for (const [other, otherValues] of Object.entries(r.labels as Record<string, string[]>)) {
      if (other <= cls) continue;
      const norm = (v: string) => v.trim().toLowerCase().replace(/\s+/g, ' ');
      const clash = [cls, ...values].map(norm).find((v) => [other, ...otherValues].map(norm).includes(v));
      if (clash) fail(`/labels/${escapePointerToken(other)}`, `value ${JSON.stringify(clash)} is also accepted by class "${cls}"`);
    }
  }
  const where = (loc: string) => (/^https?:\/\//i.test(loc) ? loc : isAbsolute(loc) ? loc : resolve(baseDir, loc));
  const sources: SourceSpec[] = (r.sources as Record<string, any>[]).map((s, i) => {
    const kind = (['manifest', 'collection', 'annotations', 'sheet'] as const).find((k) => k in s)!;
    const loc: string = s[kind];
    if (/^[a-z][a-z0-9+.-]*:/i.test(loc) && !/^https?:\/\//i.test(loc) && !/^[a-z]:[\\/]/i.test(loc)) {
      fail(`/sources/${i}/${kind}`, `only http(s) URLs and file paths are accepted, got ${JSON.stringify(loc)}`);
    }
    return { kind, location: where(loc), ...(s.mmPerCanvasUnit !== undefined ? { mmPerCanvasUnit: s.mmPerCanvasUnit } : {}) } as SourceSpec;
  });
  return {
    name: r.name,
    description: r.description,
    seed: String(r.seed),
    file,
    sources,
    labels: r.labels,
    scale: r.scale,
    patch: { size, stride, minCoverage: r.patch.minCoverage },
    negatives: r.negatives,
    split: r.split,
    dedupe: r.dedupe,
    request: r.request,
    network: r.network,
    rights: r.rights,
    ...(r.shards ? { shards: r.shards } : {}),
    output: where(r.output ?? `${r.name}-dataset`),
  };
}

/** Reads, parses and normalises a recipe file. */
export async function loadRecipe(path: string): Promise<Recipe> {
  const file = resolve(path);
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch (err) {
    throw new InputError('E_RECIPE_INVALID', file, '', `cannot read the recipe (${(err as NodeJS.ErrnoException).code ?? (err as Error).message})`);
  }
  const doc = parseJsonText(text, file, 'E_RECIPE_INVALID');
  return normaliseRecipe(doc, file, dirname(file));
}
