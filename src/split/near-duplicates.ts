import { byString } from '../util/hash.ts';
import { hammingHex } from '../patch/dhash.ts';

export interface HashedItem {
  id: string;
  group: string;
  hash: string;
  textured: boolean;
}

export interface NearDuplicatePair {
  a: string;
  b: string;
  distance: number;
  groups: [string, string];
}

/**
 * Finds pairs of textured items whose hashes are within `maxDistance` bits and
 * that sit in different groups. Candidates come from multi-index hashing: with
 * d ≤ 7, two 64-bit hashes that close share at least one of their eight bytes
 * exactly (pigeonhole), so only items sharing a byte value in a position are compared.
 * For d ≥ 8 it falls back to comparing every pair.
 */
export function nearDuplicatePairs(items: readonly HashedItem[], maxDistance: number): NearDuplicatePair[] {
  const textured = items.filter((i) => i.textured).slice().sort((a, b) => byString(a.id, b.id));
  const pairs = new Map<string, NearDuplicatePair>();
  const consider = (x: HashedItem, y: HashedItem) => {
    if (x.group === y.group) return;
    const [a, b] = byString(x.id, y.id) < 0 ? [x, y] : [y, x];
    const key = `${a.id}|${b.id}`;
    if (pairs.has(key)) return;
    const d = hammingHex(a.hash, b.hash);
    if (d <= maxDistance) pairs.set(key, { a: a.id, b: b.id, distance: d, groups: [a.group, b.group] });
  };
  if (maxDistance >= 8) {
    for (let i = 0; i < textured.length; i++) for (let j = i + 1; j < textured.length; j++) consider(textured[i], textured[j]);
  } else {
    for (let byte = 0; byte < 8; byte++) {
      const buckets = new Map<string, HashedItem[]>();
      for (const it of textured) {
        const k = it.hash.slice(byte * 2, byte * 2 + 2);
        const list = buckets.get(k);
        if (list) list.push(it);
        else buckets.set(k, [it]);
      }
      for (const list of buckets.values()) for (let i = 0; i < list.length; i++) for (let j = i + 1; j < list.length; j++) consider(list[i], list[j]);
    }
  }
  return [...pairs.values()].sort((p, q) => byString(p.a, q.a) || byString(p.b, q.b));
}

/** Union-find over group keys; the representative of a merged set is its smallest key. */
export function mergeGroups(groups: Iterable<string>, links: Iterable<[string, string]>): Map<string, string> {
  const parent = new Map<string, string>();
  for (const g of groups) parent.set(g, g);
  const find = (g: string): string => {
    let r = g;
    while (parent.get(r)! !== r) r = parent.get(r)!;
    let c = g;
    while (parent.get(c)! !== r) {
      const next = parent.get(c)!;
      parent.set(c, r);
      c = next;
    }
    return r;
  };
  for (const [a, b] of links) {
    if (!parent.has(a)) parent.set(a, a);
    if (!parent.has(b)) parent.set(b, b);
    const ra = find(a), rb = find(b);
    if (ra === rb) continue;
    if (byString(ra, rb) < 0) parent.set(rb, ra);
    else parent.set(ra, rb);
  }
  const out = new Map<string, string>();
  for (const g of parent.keys()) out.set(g, find(g));
  return out;
}
