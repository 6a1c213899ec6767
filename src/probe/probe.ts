import { byString, seededUnit } from '../util/hash.ts';
import { DESCRIPTORS, DescriptorName, HISTOGRAM_DESCRIPTORS, PatchDescriptors } from './describe.ts';
import { averagePrecision, precisionAt } from './retrieval.ts';

export interface ProbePatch {
  id: string;
  split: 'train' | 'val' | 'test';
  label: string;
  /** 64-bit difference hash, 16 hex digits (from the index). */
  phash: string;
  features: PatchDescriptors;
}

export interface ProbeOptions {
  seed: string;
  /** Hamming distance at or below which two patches are near-duplicates (the recipe's dedupe distance). */
  maxHashDistance: number;
  /** Galleries larger than this are sampled (seeded), and the report says so. */
  exactLimit?: number;
}

export interface Scores {
  queries: number;
  p1: number;
  p5: number;
  p10: number;
  map: number;
}

export interface RetrievalResult {
  descriptor: DescriptorName | 'all';
  distance: 'euclidean' | 'chi2';
  direction: 'test→train' | 'train→test';
  overall: Scores;
  perClass: Record<string, Scores>;
}

export interface LeakFlag {
  test: string;
  train: string;
  distance: number;
  hamming: number;
  reason: 'near-duplicate hash' | 'closer than the 1st percentile of training nearest neighbours';
}

export interface ProbeReport {
  patches: { train: number; test: number; classes: string[] };
  gallery: { exact: boolean; size: number; sampledFrom?: number };
  retrieval: RetrievalResult[];
  baselines: { random: Scores; majority: Scores & { class: string } };
  leakage: { threshold: number; trainNearestPercentile1: number; flagged: LeakFlag[] };
  notes: string[];
}

const EXACT_LIMIT = 50_000;

function concat(f: PatchDescriptors, names: readonly DescriptorName[]): Float64Array {
  const parts = names.map((n) => f[n]);
  const out = new Float64Array(parts.reduce((a, p) => a + p.length, 0));
  let o = 0;
  for (const p of parts) {
    out.set(p, o);
    o += p.length;
  }
  return out;
}

/** Per-dimension mean and standard deviation on the training rows only; a constant dimension gets σ = 1. */
export function standardiser(train: readonly Float64Array[]): (v: Float64Array) => Float32Array {
  const d = train[0]?.length ?? 0;
  const mean = new Float64Array(d), sd = new Float64Array(d);
  for (const v of train) for (let k = 0; k < d; k++) mean[k] += v[k] / train.length;
  for (const v of train) for (let k = 0; k < d; k++) sd[k] += (v[k] - mean[k]) ** 2 / train.length;
  for (let k = 0; k < d; k++) sd[k] = sd[k] > 1e-24 ? Math.sqrt(sd[k]) : 1;
  return (v) => {
    const out = new Float32Array(d);
    for (let k = 0; k < d; k++) out[k] = (v[k] - mean[k]) / sd[k];
    return out;
  };
}

const euclidean = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  let s = 0;
  for (let k = 0; k < a.length; k++) s += (a[k] - b[k]) ** 2;
  return Math.sqrt(s);
};
/** χ² distance between histograms: ½ Σ (a−b)²/(a+b), empty bins skipped (common practice). */
const chi2 = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  let s = 0;
  for (let k = 0; k < a.length; k++) {
    const t = a[k] + b[k];
    if (t > 0) s += ((a[k] - b[k]) ** 2) / t;
  }
  return s / 2;
};

function hamming(a: string, b: string): number {
  let x = BigInt(`0x${a}`) ^ BigInt(`0x${b}`);
  let n = 0;
  while (x) {
    n += Number(x & 1n);
    x >>= 1n;
  }
  return n;
}

function score(queries: readonly { label: string; ranked: readonly string[]; relevantTotal: number }[]): Scores {
  if (queries.length === 0) return { queries: 0, p1: 0, p5: 0, p10: 0, map: 0 };
  let p1 = 0, p5 = 0, p10 = 0, map = 0;
  for (const q of queries) {
    const rel = q.ranked.map((l) => (l === q.label ? 1 : 0));
    p1 += precisionAt(rel, 1);
    p5 += precisionAt(rel, 5);
    p10 += precisionAt(rel, 10);
    map += averagePrecision(rel, q.relevantTotal);
  }
  const n = queries.length;
  const r = (v: number) => Math.round((v / n) * 1e6) / 1e6;
  return { queries: n, p1: r(p1), p5: r(p5), p10: r(p10), map: r(map) };
}

/**
 * The probe (pure): can the classes be told apart by classical texture descriptors,
 * and does the test split leak from training? Each test patch queries the training
 * patches (and the reverse) by every descriptor and by their concatenation, with
 * Euclidean distance on descriptors standardised on the training split only, and χ²
 * on the raw histograms; precision@1/5/10 and mean average precision per class and
 * overall, beside a random and a majority-class baseline. Leakage: a test patch whose
 * nearest training patch is a near-duplicate by difference hash, or nearer (in the
 * concatenated descriptors) than the 1st percentile of nearest-neighbour distances
 * within training, is flagged with both ids.
 */
export function probe(patches: readonly ProbePatch[], opts: ProbeOptions): ProbeReport {
  const sorted = [...patches].sort((a, b) => byString(a.id, b.id));
  const train = sorted.filter((p) => p.split === 'train');
  const test = sorted.filter((p) => p.split === 'test');
  const notes: string[] = [];
  const limit = opts.exactLimit ?? EXACT_LIMIT;
  let gallery = train;
  if (train.length > limit) {
    gallery = [...train].sort((a, b) => seededUnit(opts.seed, 'probe-gallery', a.id) - seededUnit(opts.seed, 'probe-gallery', b.id)).slice(0, limit).sort((a, b) => byString(a.id, b.id));
    notes.push(`the training gallery was sampled: ${limit} of ${train.length} patches, seeded`);
  }
  const classes = [...new Set(sorted.map((p) => p.label))].sort(byString);
  const countIn = (set: readonly ProbePatch[]) => {
    const m = new Map<string, number>();
    for (const p of set) m.set(p.label, (m.get(p.label) ?? 0) + 1);
    return m;
  };
  const retrieval: RetrievalResult[] = [];
  const variants: { descriptor: DescriptorName | 'all'; names: readonly DescriptorName[] }[] = [...DESCRIPTORS.map((d) => ({ descriptor: d, names: [d] })), { descriptor: 'all', names: DESCRIPTORS }];
  for (const v of variants) {
    const raw = new Map(sorted.map((p) => [p.id, concat(p.features, v.names)]));
    const std = standardiser(gallery.map((p) => raw.get(p.id)!));
    const z = new Map(sorted.map((p) => [p.id, std(raw.get(p.id)!)]));
    const metrics: ('euclidean' | 'chi2')[] = v.descriptor !== 'all' && HISTOGRAM_DESCRIPTORS.includes(v.descriptor) ? ['euclidean', 'chi2'] : ['euclidean'];
    for (const metric of metrics) {
      for (const [direction, queries, pool] of [['test→train', test, gallery], ['train→test', gallery, test]] as const) {
        if (queries.length === 0 || pool.length === 0) continue;
        const poolCounts = countIn(pool);
        const rows = queries.map((q) => {
          const dists = pool.map((g, i) => ({ i, d: metric === 'chi2' ? chi2(raw.get(q.id)!, raw.get(g.id)!) : euclidean(z.get(q.id)!, z.get(g.id)!) }));
          dists.sort((a, b) => a.d - b.d || a.i - b.i);
          return { label: q.label, ranked: dists.map((x) => pool[x.i].label), relevantTotal: poolCounts.get(q.label) ?? 0 };
        });
        const perClass: Record<string, Scores> = {};
        for (const c of classes) perClass[c] = score(rows.filter((r) => r.label === c));
        retrieval.push({ descriptor: v.descriptor, distance: metric, direction, overall: score(rows), perClass });
      }
    }
  }
  // Baselines for test→train: a random ranking scores the class's share of the gallery in expectation;
  // always answering the gallery's majority class scores 1 for queries of that class and 0 otherwise.
  const gCounts = countIn(gallery);
  const majority = [...gCounts.entries()].sort((a, b) => b[1] - a[1] || byString(a[0], b[0]))[0]?.[0] ?? '';
  const prior = (label: string) => (gallery.length ? (gCounts.get(label) ?? 0) / gallery.length : 0);
  const meanOver = (f: (p: ProbePatch) => number) => (test.length ? Math.round((test.reduce((a, p) => a + f(p), 0) / test.length) * 1e6) / 1e6 : 0);
  const rnd = meanOver((p) => prior(p.label));
  const maj = meanOver((p) => (p.label === majority ? 1 : 0));
  const baselines = { random: { queries: test.length, p1: rnd, p5: rnd, p10: rnd, map: rnd }, majority: { queries: test.length, p1: maj, p5: maj, p10: maj, map: maj, class: majority } };

  // Leakage alarm on the concatenated, standardised descriptors.
  const rawAll = new Map(sorted.map((p) => [p.id, concat(p.features, DESCRIPTORS)]));
  const stdAll = standardiser(gallery.map((p) => rawAll.get(p.id)!));
  const zAll = new Map(sorted.map((p) => [p.id, stdAll(rawAll.get(p.id)!)]));
  // The 1st percentile of nearest-neighbour distances within training, estimated on at most 2,000 seeded training patches.
  const sample = gallery.length > 2000 ? [...gallery].sort((a, b) => seededUnit(opts.seed, 'probe-nn', a.id) - seededUnit(opts.seed, 'probe-nn', b.id)).slice(0, 2000) : gallery;
  if (sample !== gallery) notes.push(`the training nearest-neighbour distances were estimated on 2000 of ${gallery.length} patches, seeded`);
  const withinTrain = sample.map((a) => {
    let best = Infinity;
    for (const b of gallery) if (b !== a) best = Math.min(best, euclidean(zAll.get(a.id)!, zAll.get(b.id)!));
    return best;
  }).filter(Number.isFinite).sort((a, b) => a - b);
  const p1 = withinTrain.length ? withinTrain[Math.floor(0.01 * (withinTrain.length - 1))] : 0;
  const flagged: LeakFlag[] = [];
  for (const t of test) {
    let best: { g: ProbePatch; d: number } | undefined;
    let nearHash: { g: ProbePatch; h: number } | undefined;
    for (const g of gallery) {
      const d = euclidean(zAll.get(t.id)!, zAll.get(g.id)!);
      if (!best || d < best.d) best = { g, d };
      const h = hamming(t.phash, g.phash);
      if (h <= opts.maxHashDistance && (!nearHash || h < nearHash.h)) nearHash = { g, h };
    }
    if (nearHash) flagged.push({ test: t.id, train: nearHash.g.id, distance: Math.round(euclidean(zAll.get(t.id)!, zAll.get(nearHash.g.id)!) * 1e6) / 1e6, hamming: nearHash.h, reason: 'near-duplicate hash' });
    else if (best && best.d < p1) flagged.push({ test: t.id, train: best.g.id, distance: Math.round(best.d * 1e6) / 1e6, hamming: hamming(t.phash, best.g.phash), reason: 'closer than the 1st percentile of training nearest neighbours' });
  }
  return {
    patches: { train: train.length, test: test.length, classes },
    gallery: { exact: gallery.length === train.length, size: gallery.length, ...(gallery.length !== train.length ? { sampledFrom: train.length } : {}) },
    retrieval,
    baselines,
    leakage: { threshold: opts.maxHashDistance, trainNearestPercentile1: Math.round(p1 * 1e6) / 1e6, flagged },
    notes,
  };
}

/** The headline of a report: the concatenated descriptors, test querying train, against the random baseline. */
export function probeHeadline(report: ProbeReport): { all?: RetrievalResult; separable: boolean; flagged: number } {
  const all = report.retrieval.find((r) => r.descriptor === 'all' && r.direction === 'test→train');
  return { ...(all ? { all } : {}), separable: !!all && all.overall.p1 > report.baselines.random.p1, flagged: report.leakage.flagged.length };
}

export interface QueryPatch {
  /** Class folder the patch came from. */
  label: string;
  /** Source file (relative to the queries folder) and the patch's origin in it. */
  file: string;
  x: number;
  y: number;
  features: PatchDescriptors;
}

export interface CrossDomainReport {
  images: number;
  patches: number;
  /** Query classes with no training patches: reported, not scored. */
  unknownClasses: string[];
  /** Dataset classes no query folder offered. */
  classesWithoutQueries: string[];
  overall: Scores;
  perClass: Record<string, Scores>;
  /** The same queries against a random ranking: each class's share of the gallery. */
  randomBaseline: number;
}

/**
 * Cross-domain retrieval (pure): patches cut from outside images (photographs of
 * real materials, say) query the training patches by the concatenated descriptors,
 * standardised on training as in the probe, Euclidean distance. Relevant = same
 * class name. Answers whether such images retrieve painted examples of their class.
 */
export function crossDomain(queries: readonly QueryPatch[], patches: readonly ProbePatch[], images: number): CrossDomainReport {
  const gallery = [...patches].filter((p) => p.split === 'train').sort((a, b) => byString(a.id, b.id));
  const galleryClasses = new Set(gallery.map((p) => p.label));
  const sorted = [...queries].sort((a, b) => byString(a.label, b.label) || byString(a.file, b.file) || a.y - b.y || a.x - b.x);
  const known = sorted.filter((q) => galleryClasses.has(q.label));
  const std = standardiser(gallery.map((p) => concat(p.features, DESCRIPTORS)));
  const z = gallery.map((p) => std(concat(p.features, DESCRIPTORS)));
  const counts = new Map<string, number>();
  for (const p of gallery) counts.set(p.label, (counts.get(p.label) ?? 0) + 1);
  const rows = known.map((q) => {
    const zq = std(concat(q.features, DESCRIPTORS));
    const d = z.map((g, i) => ({ i, d: euclidean(zq, g) })).sort((a, b) => a.d - b.d || a.i - b.i);
    return { label: q.label, ranked: d.map((x) => gallery[x.i]!.label), relevantTotal: counts.get(q.label) ?? 0 };
  });
  const perClass: Record<string, Scores> = {};
  for (const c of [...new Set(known.map((q) => q.label))].sort(byString)) perClass[c] = score(rows.filter((r) => r.label === c));
  const random = known.length ? known.reduce((a, q) => a + (counts.get(q.label) ?? 0) / gallery.length, 0) / known.length : 0;
  return {
    images,
    patches: queries.length,
    unknownClasses: [...new Set(sorted.filter((q) => !galleryClasses.has(q.label)).map((q) => q.label))].sort(byString),
    classesWithoutQueries: [...galleryClasses].filter((c) => !known.some((q) => q.label === c)).sort(byString),
    overall: score(rows),
    perClass,
    randomBaseline: Math.round(random * 1e6) / 1e6,
  };
}
