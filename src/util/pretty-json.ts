/**
 * `JSON.stringify(value, null, 2)` of an object, in parts: the items of each
 * top-level array are serialised one at a time, so a document with a million
 * graph nodes is written without one string of its whole text (which a
 * JavaScript string cannot hold). Joined, the parts are the very same text:
 * JSON strings hold no raw newline, so indenting a nested value is prefixing its lines.
 *
 * A top-level value may also be a lazy sequence (an iterable that is not an
 * array or a string, such as a generator): it is written as the array of its
 * items, taken one at a time, so the items need never all exist at once.
 */
export function* prettyJsonParts(value: Record<string, unknown>): Generator<string> {
  const entries = Object.entries(value).filter(([, v]) => v !== undefined && typeof v !== 'function' && typeof v !== 'symbol');
  if (!entries.length) {
    yield '{}';
    return;
  }
  yield '{\n';
  for (let e = 0; e < entries.length; e++) {
    const [key, v] = entries[e]!;
    yield `  ${JSON.stringify(key)}: `;
    if (Array.isArray(v) || isLazySequence(v)) {
      yield* arrayParts(v);
    } else {
      yield indented(JSON.stringify(v, null, 2), 2);
    }
    yield e < entries.length - 1 ? ',\n' : '\n';
  }
  yield '}';
}

function indented(text: string, by: number): string {
  return text.replace(/\n/g, `\n${' '.repeat(by)}`);
}

function isLazySequence(v: unknown): v is Iterable<unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v) && typeof (v as Iterable<unknown>)[Symbol.iterator] === 'function';
}

/** A top-level array's text, an item at a time (one item of look-ahead decides its comma). */
function* arrayParts(items: Iterable<unknown>): Generator<string> {
  const it = items[Symbol.iterator]();
  let next = it.next();
  if (next.done) {
    yield '[]';
    return;
  }
  yield '[\n';
  while (!next.done) {
    const item = next.value;
    next = it.next();
    yield `    ${indented(JSON.stringify(item, null, 2) ?? 'null', 4)}${next.done ? '' : ','}\n`;
  }
  yield '  ]';
}
