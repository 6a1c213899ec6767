import { byString, seededUnit } from '../util/hash.ts';

export type SplitName = 'train' | 'val' | 'test';
export const SPLITS: readonly SplitName[] = ['train', 'val', 'test'];

export interface GroupInfo {
  key: string;
  /** Patch counts per class in this group. */
  classes: Record<string, number>;
}

export interface SplitMove {
  group: string;
  from: SplitName;
  to: SplitName;
  because: string;
}

export interface ClassBalance {
  label: string;
  groups: number;
  patches: number;
  /** Realised share of the class's patches per split. */
  shares: Record<SplitName, number>;
  /** Largest |share − target| over the splits. */
  deviation: number;
  /** Whether the class has enough groups for the bound to be promised (`BALANCE_MIN_GROUPS`). */
  bound: boolean;
}

export interface SplitAssignment {
  byGroup: Map<string, SplitName>;
  /**
   * Groups (not pinned) that sit away from the split their hash gives, with the
   * reason: a property of the assignment itself, whatever it started from.
   */
  moves: SplitMove[];
  /** Classes that could not be present in every split with a positive fraction (too few groups). */
  unrepairable: { label: string; missing: SplitName[]; groups: number }[];
  /** Groups kept in the split a previous index gave them (`--keep-splits`). */
  pinned: number;
  /** Per class: realised shares and deviation from the fractions. */
  balance: ClassBalance[];
}

export interface AssignOptions {
  /** Hard pins (`--keep-splits`): these groups keep this split and are never moved. */
  pinned?: ReadonlyMap<string, SplitName>;
  /**
   * Soft anchors (the previous assignment recorded in the lock): these groups start
   * in this split and move only when balance needs it, never from test to train.
   */
  previous?: ReadonlyMap<string, SplitName>;
}

/** A class with at least this many groups is promised every split's share within `BALANCE_BOUND` of its target. */
export const BALANCE_MIN_GROUPS = 20;
export const BALANCE_BOUND = 0.03;
/** The search aims inside the bound, so that the promise holds with room to spare. */
const AIM = 0.02;
/** Exchanges of two groups are searched only up to this many movable groups (quadratic). */
const SWAP_LIMIT = 600;
const EPS = 1e-12;
/** Weight of the excess beyond the promised bound, against the excess beyond AIM. */
const WEIGHT = 100;

/** The split a group hashes to: u = hash(seed, group) in [0,1), cut at the cumulative fractions. */
export function hashedSplit(seed: string, group: string, f: Record<SplitName, number>): { split: SplitName; u: number } {
  const u = seededUnit(seed, 'split', group);
  const split: SplitName = u < f.train ? 'train' : u < f.train + f.val ? 'val' : 'test';
  return { split, u };
}

interface State {
  readonly key: string;
  readonly u: number;
  readonly classes: readonly (readonly [number, number])[]; // [class index, patches]
  readonly start: SplitName;
  readonly home: SplitName;
  readonly anchored: boolean;
  readonly pinned: boolean;
  split: SplitName;
}

/**
 * Assigns whole groups to splits: deterministic, group-aware, balanced and stable.
 *
 * 1. Every group starts where it was before (the previous assignment, when the
 *    lock has one, or a `--keep-splits` pin), else where hash(seed, group) sends
 *    it. Hashing alone is stable but blind to group sizes.
 * 2. Balance by the fewest, cheapest moves. The objective is the sum over classes
 *    and splits of the squared excess of |share − target| beyond 0.02; while it is
 *    positive, the move of one group to another split that lowers it most per unit
 *    of cost is made. A move's cost is how far the group's hash lies from the
 *    target split's range (so the groups that move are the ones near a boundary,
 *    the same ones from run to run), plus one when it leaves its previous split.
 *    Pinned groups never move; previously assigned groups never go from test to
 *    train. When no single move helps, the exchange of two groups between two
 *    splits is tried.
 * 3. Classes with fewer groups than splits keep what they have and are reported.
 *
 * The result depends only on the groups, the seed, the fractions and the previous
 * assignment, never on input order.
 */
export function assignSplits(groups: readonly GroupInfo[], seed: string, f: Record<SplitName, number>, options: AssignOptions = {}): SplitAssignment {
  const pins = options.pinned ?? new Map<string, SplitName>();
  const previous = options.previous ?? new Map<string, SplitName>();
  const active = SPLITS.filter((s) => f[s] > 0);
  const sIndex = (s: SplitName) => SPLITS.indexOf(s);
  const labels = [...new Set(groups.flatMap((g) => Object.keys(g.classes).filter((c) => (g.classes[c] ?? 0) > 0)))].sort(byString);
  const cIndex = new Map(labels.map((l, i) => [l, i]));
  const states: State[] = [...groups]
    .sort((a, b) => byString(a.key, b.key))
    .map((g) => {
      const { split: home, u } = hashedSplit(seed, g.key, f);
      const pin = pins.get(g.key);
      const prev = previous.get(g.key);
      const pinned = pin !== undefined && active.includes(pin);
      const anchored = !pinned && prev !== undefined && active.includes(prev);
      const start = pinned ? pin! : anchored ? prev! : home;
      const classes = Object.entries(g.classes)
        .filter(([, n]) => n > 0)
        .map(([c, n]) => [cIndex.get(c)!, n] as const)
        .sort((a, b) => a[0] - b[0]);
      return { key: g.key, u, classes, start, home, anchored, pinned, split: start };
    });

  // A rerun over the same groups keeps the previous assignment as it is: the
  // result of a build is a fixed point, so rebuilding with its lock changes nothing.
  const sameGroups = states.length === previous.size && states.every((g) => previous.get(g.key) === g.start);
  const C = labels.length;
  const total = new Float64Array(C);
  const count = new Float64Array(C * 3);
  for (const g of states) for (const [c, n] of g.classes) {
    total[c] += n;
    count[c * 3 + sIndex(g.split)] += n;
  }
  const target = SPLITS.map((s) => f[s]);
  const eligible = new Uint8Array(C);
  for (const g of states) for (const [c] of g.classes) eligible[c]++;
  for (let c = 0; c < C; c++) eligible[c] = eligible[c]! >= BALANCE_MIN_GROUPS ? 1 : 0;
  /**
   * The objective for one class and split with `n` patches there: the squared excess
   * of |share − target| beyond AIM, plus, for a class with enough groups, a heavy
   * weight on the excess beyond the promised bound.
   */
  const term = (c: number, s: number, n: number, promiseOnly: boolean) => {
    if (target[s] === 0 && n === 0) return 0;
    const dev = Math.abs(n / total[c]! - target[s]!);
    const over = eligible[c] ? Math.max(0, dev - BALANCE_BOUND + AIM / 10) : 0;
    if (promiseOnly) return over * over;
    const e = Math.max(0, dev - AIM);
    return e * e + WEIGHT * over * over;
  };
  const range = (s: SplitName): [number, number] => (s === 'train' ? [0, f.train] : s === 'val' ? [f.train, f.train + f.val] : [f.train + f.val, 1]);
  const cost = (g: State, s: SplitName) => {
    const [lo, hi] = range(s);
    return (g.u < lo ? lo - g.u : g.u >= hi ? g.u - hi : 0) + 0.02;
  };
  const apply = (g: State, to: SplitName) => {
    for (const [c, n] of g.classes) {
      count[c * 3 + sIndex(g.split)] -= n;
      count[c * 3 + sIndex(to)] += n;
    }
    g.split = to;
  };
  /** Change of the objective if the groups moved as given. */
  const change = new Float64Array(C * 3);
  const delta = (moves: readonly { g: State; to: SplitName }[], promiseOnly: boolean) => {
    const touched: number[] = [];
    for (const { g, to } of moves) for (const [c, n] of g.classes) {
      const a = c * 3 + sIndex(g.split);
      const b = c * 3 + sIndex(to);
      if (change[a] === 0) touched.push(a);
      change[a] -= n;
      if (change[b] === 0) touched.push(b);
      change[b] += n;
    }
    let d = 0;
    for (const i of touched) {
      const ch = change[i]!;
      change[i] = 0;
      if (ch === 0) continue;
      const c = Math.floor(i / 3);
      d += term(c, i % 3, count[i]! + ch, promiseOnly) - term(c, i % 3, count[i]!, promiseOnly);
    }
    return d;
  };
  const objective = (promiseOnly: boolean) => {
    let j = 0;
    for (let c = 0; c < C; c++) for (let s = 0; s < 3; s++) j += term(c, s, count[c * 3 + s]!, promiseOnly);
    return j;
  };
  const allowed = (g: State, s: SplitName, anchoredToo: boolean) =>
    !g.pinned && s !== g.split && (!g.anchored || (anchoredToo && !(g.start === 'test' && s === 'train')));

  /**
   * Local search: the single move (else exchange) that lowers the objective most
   * per unit of cost, until none does. With `anchoredToo`, previously assigned
   * groups may move too, but only to keep the promised bound.
   */
  const search = (anchoredToo: boolean) => {
    const movers = states.filter((g) => !g.pinned && (anchoredToo || !g.anchored));
    let guard = 4 * states.length + 100;
    while (objective(anchoredToo) > EPS && guard-- > 0) {
      let best: { score: number; g: State; to: SplitName; partner?: State; back?: SplitName } | undefined;
      const better = (score: number, g: State, to: SplitName) => !best || score > best.score * (1 + 1e-9) || (score >= best.score * (1 - 1e-9) && byString(g.key + to, best.g.key + best.to) < 0);
      for (const g of movers) for (const to of active) {
        if (!allowed(g, to, anchoredToo)) continue;
        const d = delta([{ g, to }], anchoredToo);
        if (d >= -EPS) continue;
        const score = -d / cost(g, to);
        if (better(score, g, to)) best = { score, g, to };
      }
      if (!best && movers.length <= SWAP_LIMIT) {
        for (let i = 0; i < movers.length; i++) for (let k = i + 1; k < movers.length; k++) {
          const g = movers[i]!;
          const h = movers[k]!;
          if (g.split === h.split || !allowed(g, h.split, anchoredToo) || !allowed(h, g.split, anchoredToo)) continue;
          const d = delta([{ g, to: h.split }, { g: h, to: g.split }], anchoredToo);
          if (d >= -EPS) continue;
          const score = -d / (cost(g, h.split) + cost(h, g.split));
          if (better(score, g, h.split)) best = { score, g, to: h.split, partner: h, back: g.split };
        }
      }
      if (!best) break;
      const { g, to, partner, back } = best;
      apply(g, to);
      if (partner) apply(partner, back!);
    }
  };
  const anchoredGroups = states.filter((g) => g.anchored);
  const worse = (a: readonly [number, number], b: readonly [number, number]) => a[0] > b[0] + EPS || (Math.abs(a[0] - b[0]) <= EPS && a[1] > b[1] + EPS);
  const score = () => [objective(true), objective(false)] as const;
  /**
   * Free groups first. When that cannot keep the promise, previously assigned
   * groups move one at a time: each step tries every such move followed by a new
   * search of the free groups, and keeps the one that helps most (fewest moves
   * of old groups). Large inputs, where a move's effect is small, take the
   * plain search instead.
   */
  const balanceAll = () => {
    search(false);
    if (objective(true) <= EPS || anchoredGroups.length === 0) return score();
    if (states.length > SWAP_LIMIT) {
      search(true);
      search(false);
      return score();
    }
    for (let step = 0; step < anchoredGroups.length && objective(true) > EPS; step++) {
      const here = states.map((g) => g.split);
      const now = score();
      let best: { s: readonly [number, number]; g: State; to: SplitName } | undefined;
      for (const g of anchoredGroups) for (const to of active) {
        if (!allowed(g, to, true)) continue;
        apply(g, to);
        search(false);
        const s = score();
        if (worse(now, s) && (!best || worse(best.s, s))) best = { s, g, to };
        states.forEach((x, i) => apply(x, here[i]!));
      }
      if (!best) break;
      apply(best.g, best.to);
      search(false);
    }
    return score();
  };

  // First try: from where every group starts (stable).
  const fromStart = sameGroups ? score() : balanceAll();
  if (!sameGroups && fromStart[0] > EPS) {
    // The promise is not kept: groups with no previous split are laid out again,
    // largest first, each into the split whose shares lag most for its classes,
    // then searched again. The better try is kept (the first on a tie).
    const first = states.map((g) => g.split);
    const free = states.filter((g) => !g.pinned && !g.anchored);
    for (const g of free) for (const [c, n] of g.classes) count[c * 3 + sIndex(g.split)] -= n;
    const size = (g: State) => g.classes.reduce((a, [, n]) => a + n, 0);
    for (const g of [...free].sort((a, b) => size(b) - size(a) || a.u - b.u || byString(a.key, b.key))) {
      let pick = active[0]!;
      let bestNeed = -Infinity;
      for (const s of active) {
        let need = 0;
        for (const [c, n] of g.classes) need += (n / total[c]!) * (f[s] - count[c * 3 + sIndex(s)]! / total[c]!);
        if (need > bestNeed + 1e-12) {
          bestNeed = need;
          pick = s;
        }
      }
      g.split = pick;
      for (const [c, n] of g.classes) count[c * 3 + sIndex(pick)] += n;
    }
    const laidOut = balanceAll();
    if (!worse(fromStart, laidOut)) states.forEach((g, i) => apply(g, first[i]!));
  }

  // Presence: a class with enough groups but absent from a split gets one group there when that costs no other class its bound.
  const byGroup = new Map<string, SplitName>();
  for (const g of states) byGroup.set(g.key, g.split);
  const unrepairable: SplitAssignment['unrepairable'] = [];
  const balance: ClassBalance[] = [];
  for (const label of labels) {
    const c = cIndex.get(label)!;
    const withClass = states.filter((g) => g.classes.some(([k]) => k === c));
    const missing = active.filter((s) => count[c * 3 + sIndex(s)] === 0);
    if (missing.length > 0) unrepairable.push({ label, missing, groups: withClass.length });
    const shares = Object.fromEntries(SPLITS.map((s) => [s, round4(count[c * 3 + sIndex(s)] / total[c])])) as Record<SplitName, number>;
    balance.push({
      label,
      groups: withClass.length,
      patches: total[c],
      shares,
      deviation: round4(Math.max(...SPLITS.map((s) => Math.abs(count[c * 3 + sIndex(s)] / total[c] - f[s])))),
      bound: withClass.length >= BALANCE_MIN_GROUPS,
    });
  }
  const moves: SplitMove[] = states
    .filter((g) => !g.pinned && g.split !== g.home)
    .map((g) => ({ group: g.key, from: g.home, to: g.split, because: reasonFor(g, labels) }));
  return { byGroup, moves, unrepairable, pinned: states.filter((g) => g.pinned).length, balance };
}

function reasonFor(g: State, labels: readonly string[]): string {
  return `balance of ${g.classes.map(([c]) => labels[c]).join(', ')}`;
}

function round4(x: number): number {
  return Math.round(x * 10000) / 10000;
}
