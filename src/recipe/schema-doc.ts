import { recipeSchema } from './schema.ts';

type Node = Record<string, any>;

function typeOf(n: Node): string {
  if (n.enum) return n.enum.map((v: unknown) => JSON.stringify(v)).join(' \\| ');
  if (n.oneOf) return n.oneOf.map((o: Node) => (o.required ? `{ ${o.required.join(', ')} }` : typeOf(o))).join(' or ');
  if (Array.isArray(n.type)) return n.type.join(' or ');
  if (n.type === 'array') return `array of ${n.items ? (n.items.oneOf ? 'sources' : typeOf(n.items)) : 'values'}`;
  if (n.type === 'object' && n.additionalProperties && typeof n.additionalProperties === 'object') return `object of ${typeOf(n.additionalProperties)}`;
  return n.type ?? 'value';
}

function range(n: Node): string {
  const parts: string[] = [];
  if (n.minimum !== undefined) parts.push(`≥ ${n.minimum}`);
  if (n.exclusiveMinimum !== undefined) parts.push(`> ${n.exclusiveMinimum}`);
  if (n.maximum !== undefined) parts.push(`≤ ${n.maximum}`);
  if (n.minItems !== undefined) parts.push(`at least ${n.minItems} item(s)`);
  return parts.join(', ');
}

/** One row per field, walked from the schema: path, type, default, range, meaning. */
export function schemaRows(): { path: string; type: string; def: string; range: string; description: string; required: boolean }[] {
  const rows: ReturnType<typeof schemaRows> = [];
  const walk = (n: Node, path: string, required: boolean) => {
    rows.push({ path, type: typeOf(n), def: n.default !== undefined && typeof n.default !== 'object' ? JSON.stringify(n.default) : n.default && Object.keys(n.default).length ? JSON.stringify(n.default) : '', range: range(n), description: n.description ?? '', required });
    if (n.type === 'object' && n.properties) for (const [k, child] of Object.entries(n.properties as Record<string, Node>)) walk(child, `${path}.${k}`, (n.required ?? []).includes(k));
    if (n.oneOf && path === 'scale') for (const o of n.oneOf as Node[]) for (const [k, child] of Object.entries(o.properties as Record<string, Node>)) walk(child, `${path}.${k}`, false);
    if (n.type === 'array' && n.items?.oneOf) {
      for (const o of n.items.oneOf as Node[]) for (const [k, child] of Object.entries(o.properties as Record<string, Node>)) if (!rows.some((r) => r.path === `${path}[].${k}`)) walk(child, `${path}[].${k}`, false);
    }
  };
  for (const [k, child] of Object.entries(recipeSchema.properties as Record<string, Node>)) walk(child, k, (recipeSchema.required as readonly string[]).includes(k));
  return rows;
}

/** The recipe reference as a Markdown table (embedded in the README between markers; a test keeps them equal). */
export function recipeReferenceMarkdown(): string {
  const lines = ['| field | type | default | range | meaning |', '|---|---|---|---|---|'];
  for (const r of schemaRows()) {
    lines.push(`| \`${r.path}\`${r.required ? ' (required)' : ''} | ${r.type} | ${r.def ? `\`${r.def}\`` : ''} | ${r.range} | ${r.description.replace(/\|/g, '\\|')} |`);
  }
  return lines.join('\n');
}
