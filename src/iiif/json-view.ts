import { ErrorCode, InputError, describeValue } from '../errors.ts';

/** RFC 6901: `~` becomes `~0`, `/` becomes `~1`. */
export function escapePointerToken(token: string | number): string {
  return String(token).replace(/~/g, '~0').replace(/\//g, '~1');
}

/** Parses JSON text; a syntax error becomes an InputError naming the source. */
export function parseJsonText(text: string, source: string, code: ErrorCode = 'E_JSON_SYNTAX'): unknown {
  try {
    return JSON.parse(text);
  } catch (err) {
    const detail = err instanceof Error ? err.message : String(err);
    throw new InputError(code, source, '', `not valid JSON (${detail})`);
  }
}

/**
 * A read-only cursor over parsed JSON that knows where it is. Every accessor
 * either returns a value of the asked type or throws one InputError naming the
 * source and the JSON Pointer, so parsers never fail with a TypeError.
 */
export class JsonView {
  constructor(
    readonly value: unknown,
    readonly source: string,
    readonly code: ErrorCode,
    readonly pointer: string = '',
  ) {}

  static of(value: unknown, source: string, code: ErrorCode): JsonView {
    return new JsonView(value, source, code, '');
  }

  fail(expected: string): never {
    throw new InputError(this.code, this.source, this.pointer, `expected ${expected}, got ${describeValue(this.value)}`);
  }

  error(detail: string): InputError {
    return new InputError(this.code, this.source, this.pointer, detail);
  }

  at(key: string | number): JsonView {
    let child: unknown;
    if (typeof key === 'number') child = Array.isArray(this.value) ? this.value[key] : undefined;
    else child = this.isObject() ? (this.value as Record<string, unknown>)[key] : undefined;
    return new JsonView(child, this.source, this.code, `${this.pointer}/${escapePointerToken(key)}`);
  }

  isObject(): boolean {
    return typeof this.value === 'object' && this.value !== null && !Array.isArray(this.value);
  }
  isArray(): boolean {
    return Array.isArray(this.value);
  }
  isString(): boolean {
    return typeof this.value === 'string';
  }
  exists(): boolean {
    return this.value !== undefined && this.value !== null;
  }
  has(key: string): boolean {
    return this.isObject() && this.at(key).exists();
  }

  object(): Record<string, unknown> {
    if (!this.isObject()) this.fail('an object');
    return this.value as Record<string, unknown>;
  }
  keys(): string[] {
    return Object.keys(this.object());
  }
  items(): JsonView[] {
    if (!Array.isArray(this.value)) this.fail('an array');
    return (this.value as unknown[]).map((_, i) => this.at(i));
  }
  /** An array, or a single value treated as an array of one (JSON-LD habit). */
  list(): JsonView[] {
    if (!this.exists()) return [];
    return Array.isArray(this.value) ? this.items() : [this];
  }
  nonEmptyItems(): JsonView[] {
    const items = this.items();
    if (items.length === 0) this.fail('a non-empty array');
    return items;
  }
  string(): string {
    if (typeof this.value !== 'string') this.fail('a string');
    return this.value as string;
  }
  nonEmptyString(): string {
    const s = this.string();
    if (s.trim() === '') this.fail('a non-empty string');
    return s;
  }
  optString(): string | undefined {
    return this.exists() ? this.string() : undefined;
  }
  number(): number {
    if (typeof this.value !== 'number' || !Number.isFinite(this.value)) this.fail('a number');
    return this.value as number;
  }
  optNumber(): number | undefined {
    return this.exists() ? this.number() : undefined;
  }
  positiveNumber(): number {
    if (typeof this.value !== 'number' || !Number.isFinite(this.value)) this.fail('a positive number');
    const n = this.value as number;
    if (!(n > 0)) this.fail('a positive number');
    return n;
  }
  positiveInt(): number {
    if (typeof this.value !== 'number' || !Number.isFinite(this.value)) this.fail('a positive integer');
    const n = this.value as number;
    if (!Number.isInteger(n) || n <= 0) this.fail('a positive integer');
    return n;
  }
  optPositiveInt(): number | undefined {
    return this.exists() ? this.positiveInt() : undefined;
  }
  /** `id` (v3) or `@id` (v2 and older). */
  idOf(): string | undefined {
    if (!this.isObject()) return undefined;
    const v = this.at('id').exists() ? this.at('id') : this.at('@id');
    return v.exists() ? v.nonEmptyString() : undefined;
  }
  requireId(): string {
    const id = this.idOf();
    if (id === undefined) return this.at('id').fail('an id (a URI string)');
    return id;
  }
  /** `type` (v3) or `@type` (v2), as a list of strings. */
  types(): string[] {
    if (!this.isObject()) return [];
    const v = this.at('type').exists() ? this.at('type') : this.at('@type');
    return v.list().filter((t) => t.isString()).map((t) => t.value as string);
  }
  hasType(name: string): boolean {
    return this.types().some((t) => t === name || t.endsWith(`:${name}`));
  }
}
