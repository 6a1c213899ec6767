/**
 * One error root for everything swatchbook raises on purpose. Every error has a
 * stable string `code` and the process exit code the CLI maps it to. Context
 * sits in typed fields; bulky objects (buffers, responses) stay out of them.
 */
export type ErrorCode =
  | 'E_RECIPE_INVALID'
  | 'E_MANIFEST_INVALID'
  | 'E_COLLECTION_INVALID'
  | 'E_ANNOTATION_INVALID'
  | 'E_INFO_INVALID'
  | 'E_SHEET_INVALID'
  | 'E_JSON_SYNTAX'
  | 'E_USAGE'
  | 'E_FETCH_FAILED'
  | 'E_REFUSED'
  | 'E_FROZEN'
  | 'E_OFFLINE'
  | 'E_IMAGE_DECODE'
  | 'E_SIZE_MISMATCH'
  | 'E_PLAN';

export class SwatchbookError extends Error {
  readonly code: ErrorCode;
  readonly exitCode: number;
  constructor(code: ErrorCode, message: string, exitCode: number, options?: { cause?: unknown }) {
    super(message, options);
    this.name = 'SwatchbookError';
    this.code = code;
    this.exitCode = exitCode;
  }
}

/**
 * A document (recipe, manifest, collection, annotation, info.json, sheet) that
 * cannot be used as it is. The message names the source and the JSON Pointer
 * (RFC 6901) of the offending value. Exit code 2.
 */
export class InputError extends SwatchbookError {
  readonly source: string;
  readonly pointer: string;
  readonly detail: string;
  constructor(code: ErrorCode, source: string, pointer: string, detail: string, options?: { cause?: unknown }) {
    super(code, `${redactUrl(source)} at ${pointer === '' ? '/' : pointer}: ${detail}`, 2, options);
    this.name = 'InputError';
    this.source = redactUrl(source);
    this.pointer = pointer;
    this.detail = detail;
  }
}

/** A request that failed for good (after retries, or refused by policy). Exit code 1. */
export class FetchError extends SwatchbookError {
  readonly url: string;
  readonly status?: number;
  readonly attempts: number;
  readonly reason: string;
  constructor(
    url: string,
    reason: string,
    fields: { status?: number; attempts: number; code?: ErrorCode },
    options?: { cause?: unknown },
  ) {
    super(fields.code ?? 'E_FETCH_FAILED', `${redactUrl(url)}: ${reason}`, 1, options);
    this.name = 'FetchError';
    this.url = redactUrl(url);
    this.status = fields.status;
    this.attempts = fields.attempts;
    this.reason = reason;
  }
}

/** Why a crop could not be planned (the region is then skipped with this reason). */
export class PlanError extends SwatchbookError {
  constructor(message: string) {
    super('E_PLAN', message, 1);
    this.name = 'PlanError';
  }
}

/** A fetched image that cannot be decoded or used (damaged, too many pixels, missing). */
export class ImageError extends SwatchbookError {
  constructor(message: string, options?: { cause?: unknown }) {
    super('E_IMAGE_DECODE', message, 1, options);
    this.name = 'ImageError';
  }
}

/** A server returned an image of another size than asked, beyond the spec's rounding. */
export class SizeMismatch extends SwatchbookError {
  constructor(readonly url: string, readonly expectWidth: number, readonly expectHeight: number, readonly gotWidth: number, readonly gotHeight: number) {
    super('E_SIZE_MISMATCH', `the server returned ${gotWidth}×${gotHeight} for a ${expectWidth}×${expectHeight} request (a size limit applied silently, or a wrong scale)`, 1);
    this.name = 'SizeMismatch';
  }
}

export class UsageError extends SwatchbookError {
  constructor(message: string) {
    super('E_USAGE', message, 2);
    this.name = 'UsageError';
  }
}

/** Removes user:password from URLs so credentials never reach messages, logs or files. */
export function redactUrl(text: string): string {
  return text.replace(/\b([a-z][a-z0-9+.-]*:\/\/)[^\s/@?#]*@/gi, '$1');
}

/** Short description of a JSON value for messages: `"abc"`, `42`, `an object`, `null`. */
export function describeValue(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (value === null) return 'null';
  if (Array.isArray(value)) return `an array of ${value.length}`;
  if (typeof value === 'object') return 'an object';
  if (typeof value === 'string') {
    const s = value.length > 60 ? `${value.slice(0, 57)}...` : value;
    return JSON.stringify(s);
  }
  return String(value);
}

/** One thing that could not be served, as written to failures.jsonl. */
export interface FailureRecord {
  /**
   * `source`: a whole document; `item`: one annotation, canvas or member inside a
   * document from someone else's server (the rest of it was used); `info`: an image
   * service description; `crop`, `region`, `patch`: what the dataset is cut from.
   */
  stage: 'source' | 'item' | 'info' | 'crop' | 'region' | 'patch';
  /** Crop key, region key, or the source/URL. */
  key: string;
  url?: string;
  /** JSON Pointer (RFC 6901) of the offending value inside the document at `url`. */
  pointer?: string;
  status?: number;
  attempts?: number;
  reason: string;
}

/** The text of an error for a failure record: a FetchError's reason, an InputError's location and detail, else its message. */
export function reasonOf(err: unknown): string {
  if (err instanceof FetchError) return err.reason;
  if (err instanceof Error) return redactUrl(err.message);
  return String(err);
}

/**
 * The one conversion from an error to a failure record: a FetchError keeps its
 * URL, status and attempts; an InputError from a remote document keeps its URL
 * and JSON Pointer. Anything else is not a recordable failure and is rethrown.
 */
export function failureFrom(stage: FailureRecord['stage'], key: string, err: unknown): FailureRecord {
  if (err instanceof FetchError) {
    return { stage, key, url: err.url, ...(err.status !== undefined ? { status: err.status } : {}), attempts: err.attempts, reason: err.reason };
  }
  if (err instanceof InputError) {
    return { stage, key, url: err.source, pointer: err.pointer === '' ? '/' : err.pointer, reason: err.detail };
  }
  throw err;
}
