import type { IndexRecord } from './records.ts';
import { byString } from '../util/hash.ts';

/** ATTRIBUTION.md: each source manifest with its rights, required statement and provider. */
export function attributionMarkdown(name: string, records: readonly IndexRecord[]): string {
  const bySource = new Map<string, IndexRecord>();
  const counts = new Map<string, number>();
  for (const r of records) {
    if (!bySource.has(r.manifest)) bySource.set(r.manifest, r);
    counts.set(r.manifest, (counts.get(r.manifest) ?? 0) + 1);
  }
  const lines = [`# Attribution for ${name}`, '', 'Each source this dataset was cut from, with the statement its publisher requires. Copied from the sources; not legal advice.', ''];
  for (const m of [...bySource.keys()].sort(byString)) {
    const r = bySource.get(m)!;
    lines.push(`## ${m}`, '');
    lines.push(`- patches: ${counts.get(m)}`);
    lines.push(`- rights: ${r.rights ?? '(none given)'}`);
    if (r.requiredStatement) lines.push(`- ${r.requiredStatement.label || 'required statement'}: ${r.requiredStatement.value}`);
    if (r.provider.length) lines.push(`- provider: ${r.provider.join('; ')}`);
    lines.push('');
  }
  return lines.join('\n');
}
