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

export interface SplitAssignment {
  byGroup: Map<string, SplitName>;
  moves: SplitMove[];
  /** Classes that could not be present in every split with a positive fraction (too few groups). */
  unrepairable: { label: string; missing: SplitName[]; groups: number }[];
  /** Groups kept in the split a previous index gave them (`--keep-splits`). */
  pinned: number;
}

/** The split a group hashes to: u = hash(seed, group) in [0,1), cut at the cumulative fractions. */
export function hashedSplit(seed: string, group: string, f: Record<SplitName, number>): { split: SplitName; u: number } {
  const u = seededUnit(seed, 'split', group);
  const split: SplitName = u < f.train ? 'train' : u < f.train + f.val ? 'val' : 'test';
  return { split, u };
}

/**
 * Assigns whole groups to splits.
 *
 * Stability first: each group goes where the seeded hash of its key sends it, so
 * adding sources never moves an existing group. Then a repair pass for
 * stratification: a class with at least as many groups as splits with a positive
 * fraction, but absent from one of them, gets one group moved there (the one whose
 * hash lies closest to that split's range, taken from the split that holds the
 * most groups of the class). Moves are few and reported; only classes that
 * lacked a split can cause them, so stability holds for everything else.
 *
 * `pinned` groups (from a previous index, `--keep-splits`) keep the split they had,
 * when that split still has a positive fraction, and are never moved by the repair.
 */
export function assignSplits(groups: readonly GroupInfo[], seed: string, f: Record<SplitName, number>, pinned: ReadonlyMap<string, SplitName> = new Map()): SplitAssignment {
  const sorted = [...groups].sort((a, b) => byString(a.key, b.key));
  const byGroup = new Map<string, SplitName>();
  const hashOf = new Map<string, number>();
  const active = SPLITS.filter((s) => f[s] > 0);
  const isPinned = (key: string) => pinned.has(key) && active.includes(pinned.get(key)!);
  let pinnedCount = 0;
  for (const g of sorted) {
    const { split, u } = hashedSplit(seed, g.key, f);
    byGroup.set(g.key, isPinned(g.key) ? pinned.get(g.key)! : split);
    if (isPinned(g.key)) pinnedCount++;
    hashOf.set(g.key, u);
  }
  const classes = [...new Set(sorted.flatMap((g) => Object.keys(g.classes)))].sort(byString);
  const moves: SplitMove[] = [];
  const unrepairable: SplitAssignment['unrepairable'] = [];
  const range = (s: SplitName): [number, number] => (s === 'train' ? [0, f.train] : s === 'val' ? [f.train, f.train + f.val] : [f.train + f.val, 1]);
  const distance = (u: number, s: SplitName) => {
    const [lo, hi] = range(s);
    return u < lo ? lo - u : u >= hi ? u - hi : 0;
  };
  for (const label of classes) {
    const withClass = sorted.filter((g) => (g.classes[label] ?? 0) > 0);
    const missingNow = () => active.filter((s) => !withClass.some((g) => byGroup.get(g.key) === s));
    if (withClass.length < active.length) {
      const missing = missingNow();
      if (missing.length > 0) unrepairable.push({ label, missing, groups: withClass.length });
      continue;
    }
    for (const target of missingNow()) {
      const count = (s: SplitName) => withClass.filter((g) => byGroup.get(g.key) === s).length;
      const donors = active.filter((s) => s !== target && count(s) > 1).sort((a, b) => count(b) - count(a) || SPLITS.indexOf(a) - SPLITS.indexOf(b));
      const donor = donors[0];
      if (!donor) continue;
      const pick = withClass
        .filter((g) => byGroup.get(g.key) === donor && !isPinned(g.key))
        .sort((a, b) => distance(hashOf.get(a.key)!, target) - distance(hashOf.get(b.key)!, target) || byString(a.key, b.key))[0];
      if (!pick) continue;
      byGroup.set(pick.key, target);
      moves.push({ group: pick.key, from: donor, to: target, because: `class ${label} had no group in ${target}` });
    }
  }
  return { byGroup, moves, unrepairable, pinned: pinnedCount };
}
