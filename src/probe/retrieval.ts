/**
 * Retrieval scores for "relevant = same class" (Manning, Raghavan, Schütze,
 * Introduction to Information Retrieval, 2008, §8.4): precision in the first k
 * results, and average precision AP = (Σ over ranks r of relevant hits of P@r) / R,
 * R the number of relevant items (an item never retrieved counts 0). Pure.
 */

/** Precision of the first k entries of a ranked relevance list (1 relevant, 0 not). */
export function precisionAt(relevant: ArrayLike<number>, k: number): number {
  const n = Math.min(k, relevant.length);
  if (n === 0) return 0;
  let hits = 0;
  for (let i = 0; i < n; i++) hits += relevant[i] ? 1 : 0;
  return hits / k;
}

/** Average precision of a ranked relevance list, over `totalRelevant` (defaults to the relevant items in the list). */
export function averagePrecision(relevant: ArrayLike<number>, totalRelevant?: number): number {
  let hits = 0, sum = 0;
  for (let i = 0; i < relevant.length; i++) {
    if (relevant[i]) {
      hits++;
      sum += hits / (i + 1);
    }
  }
  const R = totalRelevant ?? hits;
  return R === 0 ? 0 : sum / R;
}

/**
 * Leave-one-out ranking of every item against the others by a distance, ties by
 * index: for each query, the relevance list of the others, nearest first.
 */
export function leaveOneOutRelevance(count: number, distance: (a: number, b: number) => number, labels: readonly string[]): number[][] {
  const out: number[][] = [];
  for (let q = 0; q < count; q++) {
    const others = [];
    for (let i = 0; i < count; i++) if (i !== q) others.push({ i, d: distance(q, i) });
    others.sort((a, b) => a.d - b.d || a.i - b.i);
    out.push(others.map((o) => (labels[o.i] === labels[q] ? 1 : 0)));
  }
  return out;
}
