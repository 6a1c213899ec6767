import type { DatasetPlan } from '../plan/plan-dataset.ts';
import type { Recipe } from '../recipe/types.ts';
import type { FailureRecord } from '../harvest/harvest.ts';
import type { NearDuplicatePair } from '../split/near-duplicates.ts';
import { BALANCE_BOUND, BALANCE_MIN_GROUPS, SPLITS, SplitAssignment, SplitName } from '../split/assign.ts';
import { byString } from '../util/hash.ts';
import type { IndexRecord } from './records.ts';
import type { SplitChurn } from './assemble.ts';
import type { SourceNote } from '../sources/resolve.ts';

export interface CardInputs {
  recipe: Recipe;
  /** The recipe with defaults filled and local paths relative to its folder. */
  recipeShown: unknown;
  records: readonly IndexRecord[];
  plan: DatasetPlan;
  failures: readonly FailureRecord[];
  pairs: readonly NearDuplicatePair[];
  mergedGroups: number;
  assignment: SplitAssignment;
  sources: { location: string; kind: string; sha256: string }[];
  notes: readonly SourceNote[];
  tool: { name: string; version: string; sharp: string; libvips: string; node: string };
  droppedPatches: number;
  resampledPieces: number;
  /** Against a previous index (`--keep-splits`): its groups, how many kept their split, changed, and new groups. */
  previousSplits?: { groups: number; kept: number; changed: number; new: number };
  /** Against the last build's assignment, from the lock. */
  churn?: SplitChurn;
}

/** Near-duplicate pairs whose patches ended in different splits (none, when merging did its work), with both ids. */
function acrossSplits(pairs: readonly NearDuplicatePair[], records: readonly IndexRecord[]) {
  if (pairs.length === 0) return [];
  const inPairs = new Set(pairs.flatMap((p) => [p.a, p.b]));
  const split = new Map<string, SplitName>();
  for (const r of records) if (inPairs.has(r.id)) split.set(r.id, r.split);
  return pairs
    .filter((p) => split.get(p.a) !== undefined && split.get(p.a) !== split.get(p.b))
    .map((p) => ({ a: p.a, b: p.b, distance: p.distance, splitA: split.get(p.a)!, splitB: split.get(p.b)! }));
}

export const SPLIT_RULE =
  'balanced and stable: each group starts in its split of the last build (from the lock) or where hash(seed, group) sends it; then the fewest groups, nearest a boundary, move until every class with at least 20 groups has each split\'s share of its patches within 0.03 of the target; a group of the last build never moves from test to train';
const MOVES_LISTED = 50;

const count = <T>(items: readonly T[], key: (t: T) => string): Record<string, number> => {
  const out: Record<string, number> = {};
  for (const it of items) out[key(it)] = (out[key(it)] ?? 0) + 1;
  return sortKeys(out);
};

function sortKeys<T>(o: Record<string, T>): Record<string, T> {
  return Object.fromEntries(Object.entries(o).sort((a, b) => byString(a[0], b[0])));
}

/** The card's facts for programs. Every number here is counted from the records, the plan or the failures. */
export function buildCard(i: CardInputs) {
  const classes = [...Object.keys(i.recipe.labels), ...(i.plan.negatives.wanted > 0 ? [i.recipe.negatives.label] : [])].sort(byString);
  const perSplit: Record<string, Record<string, number>> = {};
  for (const s of SPLITS) perSplit[s] = Object.fromEntries(classes.map((c) => [c, i.records.filter((r) => r.split === s && r.label === c).length]));
  const realised: Record<string, Record<SplitName, number>> = {};
  for (const c of classes) {
    const total = i.records.filter((r) => r.label === c).length;
    realised[c] = Object.fromEntries(SPLITS.map((s) => [s, total ? Math.round((perSplit[s][c] / total) * 1e4) / 1e4 : 0])) as Record<SplitName, number>;
  }
  const perSource: Record<string, Record<string, number>> = {};
  for (const r of i.records) {
    perSource[r.manifest] ??= {};
    perSource[r.manifest][r.label] = (perSource[r.manifest][r.label] ?? 0) + 1;
  }
  const services = new Map<string, { id: string; version: number; level: number; patches: number }>();
  for (const r of i.records) {
    const s = services.get(r.service.id) ?? { ...r.service, patches: 0 };
    s.patches++;
    services.set(r.service.id, s);
  }
  const groups = new Set(i.records.map((r) => r.group));
  // Attribute values per class: every body value beside the one that named the class, counted in patches.
  const attributes: Record<string, Record<string, number>> = {};
  for (const r of i.records) {
    for (const t of r.tags) {
      if (t.value === r.sourceLabel) continue;
      const key = t.purpose ? `${t.value} (${t.purpose})` : t.value;
      attributes[r.label] ??= {};
      attributes[r.label][key] = (attributes[r.label][key] ?? 0) + 1;
    }
  }
  return {
    name: i.recipe.name,
    motivation: i.recipe.description,
    composition: {
      patches: i.records.length,
      classes,
      perSplit,
      realisedFractions: realised,
      targetFractions: i.recipe.split.fractions,
      perSource: sortKeys(Object.fromEntries(Object.entries(perSource).map(([k, v]) => [k, sortKeys(v)]))),
      rights: count(i.records, (r) => r.rights ?? '(none)'),
      regions: { planned: i.plan.regions.length, skipped: count(i.plan.skipped, (s) => s.reason) },
      negatives: i.plan.negatives,
      nearDuplicates: { pairs: i.pairs.length, mergedGroups: i.mergedGroups, examples: i.pairs.slice(0, 20), acrossSplits: acrossSplits(i.pairs, i.records) },
      groups: { count: groups.size, groupBy: i.recipe.split.groupBy },
      splitPolicy: {
        rule: SPLIT_RULE,
        bound: { maxDeviation: BALANCE_BOUND, minGroups: BALANCE_MIN_GROUPS },
        balance: i.assignment.balance,
        awayFromHash: i.assignment.moves.length,
        moves: i.assignment.moves.slice(0, MOVES_LISTED),
        unrepairable: i.assignment.unrepairable,
        ...(i.previousSplits ? { previousIndex: i.previousSplits } : {}),
        ...(i.churn ? { againstLock: i.churn } : { againstLock: null }),
      },
      attributes: sortKeys(Object.fromEntries(Object.entries(attributes).map(([k, v]) => [k, sortKeys(v)]))),
      rightsExcluded: i.plan.rightsExcluded,
      sourceNotes: i.notes,
      failures: { count: i.failures.length, byStage: count(i.failures, (f) => f.stage), droppedPatches: i.droppedPatches, examples: i.failures.slice(0, 50) },
    },
    collection: {
      tool: i.tool,
      seed: i.recipe.seed,
      scale: i.recipe.scale,
      patch: i.recipe.patch,
      request: i.recipe.request,
      services: [...services.values()].sort((a, b) => byString(a.id, b.id)),
      crops: i.plan.crops.length,
      resampledPieces: i.resampledPieces,
      requests: new Set(i.plan.crops.flatMap((c) => c.stitch.pieces.map((p) => p.url))).size,
      sources: i.sources,
      recipe: i.recipeShown,
    },
    preprocessing: [
      'Crops are requested at a fixed scale in output pixels per canvas unit, on a grid anchored at the canvas origin.',
      'Pieces are decoded to 8-bit sRGB, resampled (Lanczos-3) only where the plan says so, stitched by exact pixel copies, and cut into square patches.',
      `Positives: patches with at least ${i.recipe.patch.minCoverage * 100}% of their pixels inside the region (pixel-centre rule).`,
      `Negatives: patches labelled "${i.recipe.negatives.label}" at seeded positions at least ${i.recipe.negatives.margin} px from every annotated area.`,
      'Patches are PNG, fixed encoder settings, no metadata.',
      'Near-duplicates: 64-bit difference hashes of textured patches within the recipe distance join their groups before splitting.',
    ],
    uses: [
      'Training and evaluating models that recognise painted materials at a fixed physical or canvas scale.',
      'Not a survey of any collection: regions are what annotators chose to mark.',
      'Flat or near-uniform patches carry little texture; negatives come from the same pictures as positives.',
    ],
    distribution: {
      attribution: 'ATTRIBUTION.md lists each source\'s required statement; every index record carries rights and required statement.',
      caution: 'Rights statements are copied from the sources. This is help, not legal advice: each institution\'s terms and the law where you work decide what use is allowed.',
    },
    maintenance: {
      rerun: 'swatchbook run <recipe> rebuilds from the cache and the lock; --frozen refuses anything the lock does not name.',
      verify: 'swatchbook verify <recipe> rebuilds and compares every file by sha256; --refetch asks the servers again and reports drift.',
    },
  };
}

export type Card = ReturnType<typeof buildCard>;

/** The card for people, in the sections of Datasheets for Datasets (Gebru et al.). */
export function renderCardMarkdown(card: Card): string {
  const c = card.composition;
  const lines: string[] = [];
  const table = (head: string[], rows: (string | number)[][]) => {
    lines.push(`| ${head.join(' | ')} |`, `|${head.map(() => '---').join('|')}|`);
    for (const r of rows) lines.push(`| ${r.join(' | ')} |`);
    lines.push('');
  };
  lines.push(`# Dataset card: ${card.name}`, '');
  lines.push('## Motivation', '', card.motivation || '(the recipe gives no description)', '');
  lines.push('## Composition', '', `${c.patches} patches in ${c.classes.length} classes, ${c.groups.count} groups (grouped by ${c.groups.groupBy}).`, '');
  lines.push('To see them: the visual report (contact sheets, canvas maps, where each class occurs, balance charts, near-duplicates, skips and failures) is written beside this folder as `<this folder>-report/index.html` by `swatchbook build` and `run`, or by `swatchbook report <this folder>`. It sits outside the folder so that this folder stays byte-identical on a rebuild.', '');
  table(['class', ...SPLITS, 'total'], c.classes.map((cls) => {
    const n = SPLITS.map((s) => c.perSplit[s][cls]);
    return [cls, ...n, n.reduce((a, b) => a + b, 0)];
  }));
  lines.push('Realised share of each class per split, counted in patches (target ' + SPLITS.map((s) => `${s} ${c.targetFractions[s]}`).join(', ') + `; promised within ${c.splitPolicy.bound.maxDeviation} for a class with at least ${c.splitPolicy.bound.minGroups} groups):`, '');
  const balanceOf = new Map(c.splitPolicy.balance.map((b) => [b.label, b]));
  table(['class', ...SPLITS, 'groups', 'largest deviation'], c.classes.map((cls) => {
    const b = balanceOf.get(cls);
    const note = !b ? '' : b.bound ? (b.deviation <= c.splitPolicy.bound.maxDeviation ? ' (within the bound)' : ' (OUTSIDE the bound)') : ' (too few groups for the bound; as close as their sizes allow)';
    return [cls, ...SPLITS.map((s) => c.realisedFractions[cls][s]), b?.groups ?? 0, b ? `${b.deviation}${note}` : '-'];
  }));
  lines.push('Patches per source manifest:', '');
  table(['manifest', 'patches'], Object.entries(c.perSource).map(([m, v]) => [m, Object.entries(v).map(([k, n]) => `${k} ${n}`).join(', ')]));
  lines.push('Rights of the patches:', '');
  table(['rights', 'patches'], Object.entries(c.rights));
  lines.push(`Regions planned: ${c.regions.planned}. Skipped: ${Object.entries(c.regions.skipped).map(([k, n]) => `${k} ${n}`).join(', ') || 'none'}.`, '');
  lines.push(`Negatives: wanted ${c.negatives.wanted}, planned ${c.negatives.planned}, borrowed from other canvases of the same group ${c.negatives.borrowedWithinGroup}, short by ${c.negatives.shortfall}.`, '');
  lines.push(`Near-duplicates across groups: ${c.nearDuplicates.pairs} pairs; ${c.nearDuplicates.mergedGroups} groups merged into others before splitting.`);
  const across = c.nearDuplicates.acrossSplits;
  lines.push(`Leakage by difference hash: ${across.length} near-duplicate pair(s) in different splits${across.length ? `: ${across.slice(0, 20).map((p) => `${p.a} (${p.splitA}) ~ ${p.b} (${p.splitB}), distance ${p.distance}`).join('; ')}` : ''}. The descriptor-based leakage alarm (a test patch unusually close to a training patch, with both ids) is in \`probe.json\` beside the dataset (\`swatchbook probe\`, run after every build unless \`--no-probe\`).`, '');
  lines.push(`Split policy: ${c.splitPolicy.rule}.`);
  const a = c.splitPolicy.againstLock;
  if (a) {
    const dirs = Object.entries(a.movedBy).map(([k, n]) => `${k} ${n}`).join(', ');
    lines.push(`- against the last build (the lock): ${a.groups} group(s) then; ${a.kept} kept their split, ${a.moved} moved${dirs ? ` (${dirs})` : ''}; ${a.new} new, ${a.gone} gone`);
  } else lines.push('- no previous assignment in the lock: every group started where its hash sends it');
  lines.push(`- ${c.splitPolicy.awayFromHash} group(s) sit away from the split their hash gives, for balance${c.splitPolicy.awayFromHash > c.splitPolicy.moves.length ? ` (the first ${c.splitPolicy.moves.length} listed in card.json)` : ''}`);
  if (c.splitPolicy.unrepairable.length) for (const u of c.splitPolicy.unrepairable) lines.push(`- class ${u.label} has ${u.groups} group(s), too few for every split; absent from ${u.missing.join(', ')} (stability kept)`);
  const prev = (c.splitPolicy as { previousIndex?: { groups: number; kept: number; changed: number; new: number } }).previousIndex;
  if (prev) lines.push(`- kept the splits of a previous index (${prev.groups} group(s)): ${prev.kept} kept their split, ${prev.changed} changed, ${prev.new} new group(s) placed by the rule`);
  lines.push('');
  if (c.rightsExcluded.length) {
    lines.push('Excluded by the rights filter:', '');
    table(['manifest', 'rights'], c.rightsExcluded.map((r) => [r.manifestId, r.rights]));
  }
  if (Object.keys(c.attributes).length) {
    lines.push('Other body values (attributes) of the annotations, per class, counted in patches:', '');
    table(['class', 'values'], Object.entries(c.attributes).map(([cls, v]) => [cls, Object.entries(v).map(([k, n]) => `${k.replace(/\|/g, '\\|')} ${n}`).join('; ')]));
  }
  if (c.sourceNotes.length) {
    lines.push('Notes on the sources:', '');
    for (const n of c.sourceNotes) {
      if (n.kind === 'collection-cycle') lines.push(`- collection ${n.collection} lists ${n.member}, which contains it (${n.chain.join(' → ')}); followed once`);
      else lines.push(`- canvas id ${n.canvasId} is used by ${n.manifests.length} manifests (${n.manifests.join(', ')}); annotations reached through a manifest are kept to its canvases`);
    }
    lines.push('');
  }
  lines.push(`Failures: ${c.failures.count} (${Object.entries(c.failures.byStage).map(([k, n]) => `${k} ${n}`).join(', ') || 'none'}); patches dropped with them: ${c.failures.droppedPatches}. See failures.jsonl.`, '');
  if (c.failures.examples.length) {
    table(['stage', 'where', 'reason'], c.failures.examples.map((f) => [f.stage, `${f.url ?? f.key}${f.pointer ? ` at ${f.pointer}` : ''}`.replace(/\|/g, '\\|'), f.reason.replace(/\|/g, '\\|')]));
  }
  const col = card.collection;
  lines.push('## Collection process', '');
  lines.push(`Made by ${col.tool.name} ${col.tool.version} (sharp ${col.tool.sharp}, libvips ${col.tool.libvips}, Node.js ${col.tool.node}) with seed \`${col.seed}\`.`, '');
  lines.push(`Scale: \`${JSON.stringify(col.scale)}\`. Patches: \`${JSON.stringify(col.patch)}\`. Requests: \`${JSON.stringify(col.request)}\`.`, '');
  lines.push(`${col.crops} crops from ${col.requests} distinct image requests; ${col.resampledPieces} piece(s) came back one pixel off the planned size (within the spec's rounding) and were resampled to it.`, '');
  table(['image service', 'Image API', 'level', 'patches'], col.services.map((s) => [s.id, s.version, s.level, s.patches]));
  lines.push('Source documents:', '');
  table(['kind', 'location', 'sha256'], col.sources.map((s) => [s.kind, s.location, s.sha256.slice(0, 16)]));
  lines.push('## Preprocessing', '', ...card.preprocessing.map((p) => `- ${p}`), '');
  lines.push('## Uses', '', ...card.uses.map((p) => `- ${p}`), '');
  lines.push('## Distribution', '', card.distribution.attribution, '', card.distribution.caution, '');
  lines.push('## Maintenance', '', `- ${card.maintenance.rerun}`, `- ${card.maintenance.verify}`, '');
  return lines.join('\n');
}
