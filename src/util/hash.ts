import { createHash } from 'node:crypto';

export function sha256Hex(data: string | Uint8Array): string {
  return createHash('sha256').update(data).digest('hex');
}

/** A short stable id from parts: the first `length` hex digits of sha256 of the parts joined by U+001F. */
export function stableId(parts: readonly (string | number)[], length = 16): string {
  return sha256Hex(parts.map(String).join('\u001f')).slice(0, length);
}

/** A uniform number in [0, 1) from a seed and stable key parts (sha256, first 52 bits). */
export function seededUnit(seed: string | number, ...parts: (string | number)[]): number {
  const hex = sha256Hex([String(seed), ...parts.map(String)].join('\u001f')).slice(0, 13);
  return parseInt(hex, 16) / 2 ** 52;
}

/** Compares strings by UTF-16 code units: locale-free, identical on every machine. */
export function byString(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}
