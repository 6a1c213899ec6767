import { byString } from '../util/hash.ts';

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
 * that sit in different groups. Candidates come from multi-index hashing: the
 * 64 bits are cut into m = max(2, d + 1) chunks, and two hashes within d bits
 * agree exactly on at least one chunk (pigeonhole), so only items sharing a
 * chunk's value are compared; a pair is counted in the first chunk it shares,
 * never twice. With d = 4 that is 5 chunks of 12–13 bits: about 5·n²/8192
 * comparisons for n random hashes (a million patches: about 6·10⁸ popcounts of
 * two 32-bit words, seconds), where one-byte chunks made n²/64 (hours).
 * Items are taken in id order; pairs come out sorted by (a, b).
 */
export function nearDuplicatePairs(items: readonly HashedItem[], maxDistance: number): NearDuplicatePair[] {
  const textured = items.filter((i) => i.textured).slice().sort((a, b) => byString(a.id, b.id));
  const n = textured.length;
  const hi = new Uint32Array(n), lo = new Uint32Array(n), group = new Int32Array(n);
  const groupIds = new Map<string, number>();
  for (let i = 0; i < n; i++) {
    const it = textured[i]!;
    hi[i] = parseInt(it.hash.slice(0, 8), 16) >>> 0;
    lo[i] = parseInt(it.hash.slice(8, 16), 16) >>> 0;
    let g = groupIds.get(it.group);
    if (g === undefined) groupIds.set(it.group, (g = groupIds.size));
    group[i] = g;
  }
  const m = Math.min(64, Math.max(2, maxDistance + 1));
  const bounds = Array.from({ length: m + 1 }, (_, c) => Math.floor((c * 64) / m));
  const chunk = (i: number, c: number) => bitsOf(hi[i]!, lo[i]!, bounds[c]!, bounds[c + 1]!);
  const found: [number, number, number][] = [];
  const order = new Int32Array(n);
  const keys = new Float64Array(n);
  for (let c = 0; c < m; c++) {
    for (let i = 0; i < n; i++) {
      order[i] = i;
      keys[i] = chunk(i, c);
    }
    order.sort((x, y) => keys[x]! - keys[y]! || x - y);
    for (let s = 0; s < n; ) {
      let e = s + 1;
      while (e < n && keys[order[e]!] === keys[order[s]!]) e++;
      for (let p = s; p < e; p++) {
        for (let q = p + 1; q < e; q++) {
          const i = Math.min(order[p]!, order[q]!), j = Math.max(order[p]!, order[q]!);
          if (group[i] === group[j]) continue;
          const d = popcount32(hi[i]! ^ hi[j]!) + popcount32(lo[i]! ^ lo[j]!);
          if (d > maxDistance) continue;
          let earlier = false;
          for (let c0 = 0; c0 < c && !earlier; c0++) earlier = chunk(i, c0) === chunk(j, c0);
          if (!earlier) found.push([i, j, d]);
        }
      }
      s = e;
    }
  }
  found.sort((x, y) => x[0] - y[0] || x[1] - y[1]);
  return found.map(([i, j, d]) => ({ a: textured[i]!.id, b: textured[j]!.id, distance: d, groups: [textured[i]!.group, textured[j]!.group] }));
}

/** Bits [from, to) of the 64-bit value hi·2³² + lo, counted from the most significant; at most 32 bits. */
function bitsOf(hi: number, lo: number, from: number, to: number): number {
  const width = to - from;
  const mask = width === 32 ? 0xffffffff : (1 << width) - 1;
  if (to <= 32) return ((hi >>> (32 - to)) & mask) >>> 0;
  if (from >= 32) return ((lo >>> (64 - to)) & mask) >>> 0;
  const highPart = hi & ((1 << (32 - from)) - 1), lowBits = to - 32;
  return highPart * 2 ** lowBits + (lo >>> (32 - lowBits));
}

function popcount32(v: number): number {
  v = v - ((v >>> 1) & 0x55555555);
  v = (v & 0x33333333) + ((v >>> 2) & 0x33333333);
  return (((v + (v >>> 4)) & 0x0f0f0f0f) * 0x01010101) >>> 24;
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
