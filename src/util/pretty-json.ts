/**
 * `JSON.stringify(value, null, 2)` of an object, in parts: the items of each
 * top-level array are serialised one at a time, so a document with a million
 * graph nodes is written without one string of its whole text (which a
 * JavaScript string cannot hold). Joined, the parts are the very same text:
 * JSON strings hold no raw newline, so indenting a nested value is prefixing its lines.
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
    if (Array.isArray(v) && v.length) {
      yield '[\n';
      for (let i = 0; i < v.length; i++) yield `    ${indented(JSON.stringify(v[i], null, 2) ?? 'null', 4)}${i < v.length - 1 ? ',' : ''}\n`;
      yield '  ]';
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
