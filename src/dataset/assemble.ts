import { dirname, isAbsolute, relative } from 'node:path';
import { FailureRecord, redactUrl } from '../errors.ts';
import type { Cut } from '../cut/cut-patches.ts';
import type { PieceOutcome } from '../harvest/harvest.ts';
import type { DatasetPlan, PatchPlan } from '../plan/plan-dataset.ts';
import type { Recipe } from '../recipe/types.ts';
import type { ResolvedSources } from '../sources/resolve.ts';
import { assignSplits, SplitAssignment, SplitName, SPLITS } from '../split/assign.ts';
import { mergeGroups, nearDuplicatePairs, NearDuplicatePair } from '../split/near-duplicates.ts';
import { byString } from '../util/hash.ts';
import { buildCard, Card } from './card.ts';
import { canvasFacts, CanvasFacts } from './canvas-facts.ts';
import type { IndexRecord } from './records.ts';

/** The versions a dataset records (no wall-clock time, no machine name). */
export interface ToolVersions {
  name: string;
  version: string;
  sharp: string;
  libvips: string;
  node: string;
}

export interface AssembleInput {
  recipe: Recipe;
  sources: Pick<ResolvedSources, 'failures' | 'notes' | 'documents'>;
  plan: DatasetPlan;
  /** Crops whose every piece was served, with the pieces' final URLs and sha256, by crop key. */
  served: ReadonlyMap<string, readonly PieceOutcome[]>;
  harvestFailures: readonly FailureRecord[];
  cuts: ReadonlyMap<string, Cut>;
  cutFailures: readonly FailureRecord[];
  resampledPieces: number;
  tool: ToolVersions;
  /** Splits of groups in a previous index (`--keep-splits`): those groups keep them. */
  previousSplits?: ReadonlyMap<string, SplitName>;
  /**
   * The split of every group in the last build, from the lock (groups start there
   * and move only for balance), and the churn that build recorded.
   */
  lockedSplits?: { groups: ReadonlyMap<string, SplitName>; churn?: unknown };
}

/** How the assignment compares with the last build's (from the lock). */
export interface SplitChurn {
  /** Groups in the last build. */
  groups: number;
  /** Of those still present: how many kept their split and how many moved. */
  kept: number;
  moved: number;
  /** Moves by direction, e.g. `val→train`. */
  movedBy: Record<string, number>;
  /** Groups not in the last build, and groups of the last build no longer present. */
  new: number;
  gone: number;
}

/** Everything the write stage writes, in its final order. */
export interface AssembledDataset {
  records: IndexRecord[];
  failures: FailureRecord[];
  card: Card;
  pairs: NearDuplicatePair[];
  perSplit: Record<string, number>;
  assignment: SplitAssignment;
  /** Against the lock's assignment (what the lock records with the new one). */
  churn?: SplitChurn;
  /** Every canvas that contributed patches: place, painted area, regions and thumbnail request (`canvases.json`). */
  canvases: CanvasFacts[];
  /** Every region or patch the plan skipped, with the reason (`skipped.jsonl`). */
  skipped: DatasetPlan['skipped'];
}

/**
 * The recipe as written into the card: defaults filled, local paths relative to
 * the recipe's folder, and no output folder: the dataset's bytes must not depend
 * on where it is written.
 */
export function recipeForCard(recipe: Recipe): unknown {
  const base = dirname(recipe.file);
  const rel = (p: string) => (/^https?:\/\//i.test(p) ? redactUrl(p) : !isAbsolute(p) ? p : relative(base, p) || '.');
  const { file: _file, output: _output, ...rest } = recipe;
  return {
    ...rest,
    sources: recipe.sources.map((s) => ({ [s.kind]: rel(s.location), ...('mmPerCanvasUnit' in s && s.mmPerCanvasUnit !== undefined ? { mmPerCanvasUnit: s.mmPerCanvasUnit } : {}) })),
  };
}

/**
 * Assembles the dataset from the plan and what was cut (pure): near-duplicates
 * across groups join their groups, splits are assigned per group, every patch
 * gets its index record with its provenance, and the card is built. Records are
 * sorted by id and failures by stage and key, never by arrival.
 */
export function assembleDataset(i: AssembleInput): AssembledDataset {
  const { recipe, plan, cuts } = i;
  const failures: FailureRecord[] = [...i.sources.failures, ...i.harvestFailures, ...i.cutFailures];
  const kept = plan.patches.filter((p) => cuts.has(p.id));
  const pairs = nearDuplicatePairs(kept.map((p) => ({ id: p.id, group: p.group, hash: cuts.get(p.id)!.phash, textured: cuts.get(p.id)!.textured })), recipe.dedupe.maxDistance);
  const merged = mergeGroups(kept.map((p) => p.group), pairs.map((x) => x.groups));
  const groupOf = (p: PatchPlan) => merged.get(p.group) ?? p.group;
  const mergedGroups = new Set([...merged.entries()].filter(([g, r]) => g !== r).map(([g]) => g)).size;
  const classesByGroup = new Map<string, Record<string, number>>();
  for (const p of kept) {
    const g = groupOf(p);
    const c = classesByGroup.get(g) ?? {};
    c[p.label] = (c[p.label] ?? 0) + 1;
    classesByGroup.set(g, c);
  }
  const assignment = assignSplits([...classesByGroup.entries()].map(([key, classes]) => ({ key, classes })), recipe.seed, recipe.split.fractions, {
    ...(i.previousSplits ? { pinned: i.previousSplits } : {}),
    ...(i.lockedSplits ? { previous: i.lockedSplits.groups } : {}),
  });
  const churn = churnToReport(i.lockedSplits, assignment.byGroup);
  let previous: { groups: number; kept: number; changed: number; new: number } | undefined;
  if (i.previousSplits) {
    const groups = [...classesByGroup.keys()];
    const known = groups.filter((g) => i.previousSplits!.has(g));
    const changed = known.filter((g) => assignment.byGroup.get(g) !== i.previousSplits!.get(g)).length;
    previous = { groups: i.previousSplits.size, kept: known.length - changed, changed, new: groups.length - known.length };
  }
  const sharedOf = cropPartsMemo(plan, i.served);
  const tagsOf = tagsMemo();
  const records: IndexRecord[] = kept.map((p) => {
    const shared = sharedOf(p.cropKey);
    const cut = cuts.get(p.id)!;
    const group = groupOf(p);
    const split = assignment.byGroup.get(group)!;
    // Key order is the order of IndexRecord (the index is these objects serialised).
    return {
      id: p.id,
      split,
      label: p.label,
      kind: p.kind,
      file: `patches/${split}/${p.label}/${p.id}.png`,
      sha256: cut.sha256,
      phash: cut.phash,
      coverage: p.coverage,
      group,
      manifest: redactUrl(p.manifestId),
      collections: shared.collections,
      canvas: redactUrl(p.canvasId),
      annotation: p.annotationId ?? null,
      annotator: p.annotator ?? null,
      sourceLabel: p.rawLabel ?? null,
      tags: tagsOf(p.tags),
      bodyChoice: shared.bodyChoice,
      service: shared.service,
      requests: shared.requests,
      responses: shared.responses,
      canvasRegion: p.canvasRegion,
      imageRegion: p.imageRegion,
      scale: shared.scale,
      crop: p.cropKey,
      rights: shared.rights,
      requiredStatement: shared.requiredStatement,
      provider: shared.provider,
      logos: shared.logos,
      partOf: shared.partOf,
    };
  });
  records.sort((a, b) => byString(a.id, b.id));
  failures.sort((a, b) => byString(a.stage, b.stage) || byString(a.key, b.key) || byString(a.reason, b.reason));

  const card = buildCard({
    recipe,
    recipeShown: recipeForCard(recipe),
    records,
    plan,
    failures,
    pairs,
    mergedGroups,
    assignment,
    notes: i.sources.notes ?? [],
    sources: i.sources.documents.map((d) => ({ ...d, location: /^https?:/.test(d.location) ? redactUrl(d.location) : relative(dirname(recipe.file), d.location) })),
    tool: i.tool,
    droppedPatches: plan.patches.length - kept.length,
    ...(previous ? { previousSplits: previous } : {}),
    ...(churn ? { churn } : {}),
    resampledPieces: i.resampledPieces,
  });
  const perSplit = Object.fromEntries(SPLITS.map((s) => [s, records.filter((r) => r.split === s).length]));
  const skipped = [...plan.skipped].sort((a, b) => byString(a.reason, b.reason) || byString(a.key, b.key) || byString(a.detail, b.detail));
  return { records, failures, card, pairs, perSplit, assignment, ...(churn ? { churn } : {}), canvases: canvasFacts(plan), skipped };
}

type CropParts = Pick<IndexRecord, 'collections' | 'bodyChoice' | 'service' | 'requests' | 'responses' | 'scale' | 'rights' | 'requiredStatement' | 'provider' | 'logos' | 'partOf'>;

/**
 * The parts of an index record that every patch of one crop shares (its
 * service, requests, rights…), made once per crop: a crop yields up to
 * thousands of patches, and a million records each with their own copies
 * would not fit in memory. Records share these objects; nothing mutates them.
 */
function cropPartsMemo(plan: DatasetPlan, served: AssembleInput['served']): (cropKey: string) => CropParts {
  const cropByKey = new Map(plan.crops.map((c) => [c.key, c]));
  const memo = new Map<string, CropParts>();
  return (cropKey) => {
    let parts = memo.get(cropKey);
    if (parts) return parts;
    const crop = cropByKey.get(cropKey)!;
    const ctx = plan.contexts[cropKey]!;
    parts = {
      collections: ctx.collections.map(redactUrl),
      bodyChoice: ctx.choice ?? null,
      service: { id: redactUrl(ctx.service.id), version: ctx.service.version, level: ctx.service.level },
      requests: crop.stitch.pieces.map((x) => redactUrl(x.url)),
      responses: (served.get(cropKey) ?? []).map((o) => ({ url: redactUrl(o.url), sha256: o.sha256 })),
      scale: { pixelsPerCanvasUnit: ctx.scale.pixelsPerCanvasUnit, basis: ctx.scale.basis, mmPerCanvasUnit: ctx.scale.mmPerCanvasUnit ?? null },
      rights: ctx.provenance.rights ?? null,
      requiredStatement: ctx.provenance.requiredStatement ?? null,
      provider: ctx.provenance.provider,
      logos: (ctx.provenance.logos ?? []).map(redactUrl),
      partOf: (ctx.provenance.partOf ?? []).map(redactUrl),
    };
    memo.set(cropKey, parts);
    return parts;
  };
}

/** A region's tags as records write them, made once per region (its patches share the plan's tag list). */
function tagsMemo(): (tags: PatchPlan['tags']) => IndexRecord['tags'] {
  const memo = new Map<readonly unknown[], IndexRecord['tags']>();
  const none: IndexRecord['tags'] = [];
  return (tags) => {
    if (!tags || tags.length === 0) return none;
    let out = memo.get(tags);
    if (!out) memo.set(tags, (out = tags.map((t) => ({ value: t.value, purpose: t.purpose ?? null, language: t.language ?? null, raw: t.raw ?? null }))));
    return out;
  };
}

/**
 * The churn the card reports: against the lock's assignment when this one differs
 * from it; when it is the same (a rerun), the churn the lock recorded, so that
 * rebuilding a dataset gives the same bytes.
 */
export function churnToReport(locked: AssembleInput['lockedSplits'], now: ReadonlyMap<string, SplitName>): SplitChurn | undefined {
  if (!locked) return undefined;
  const same = locked.groups.size === now.size && [...now].every(([g, s]) => locked.groups.get(g) === s);
  if (same) return isChurn(locked.churn) ? locked.churn : undefined;
  return splitChurn(locked.groups, now);
}

function isChurn(x: unknown): x is SplitChurn {
  const c = x as SplitChurn;
  return typeof c === 'object' && c !== null && typeof c.groups === 'number' && typeof c.kept === 'number' && typeof c.moved === 'number' && typeof c.new === 'number' && typeof c.gone === 'number' && typeof c.movedBy === 'object';
}

/** Compares an assignment with the last build's. */
export function splitChurn(before: ReadonlyMap<string, SplitName>, after: ReadonlyMap<string, SplitName>): SplitChurn {
  let kept = 0;
  const movedBy: Record<string, number> = {};
  for (const [g, s] of before) {
    const now = after.get(g);
    if (now === undefined) continue;
    if (now === s) kept++;
    else movedBy[`${s}→${now}`] = (movedBy[`${s}→${now}`] ?? 0) + 1;
  }
  const moved = Object.values(movedBy).reduce((a, b) => a + b, 0);
  const sorted = Object.fromEntries(Object.entries(movedBy).sort((a, b) => byString(a[0], b[0])));
  return { groups: before.size, kept, moved, movedBy: sorted, new: [...after.keys()].filter((g) => !before.has(g)).length, gone: [...before.keys()].filter((g) => !after.has(g)).length };
}
