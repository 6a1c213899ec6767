import type { CropRequest } from '../plan/crop-request.ts';
import { byString } from '../util/hash.ts';

export interface ShardPlan {
  index: number;
  /** Image server hosts this shard alone fetches from: its crops are the crops on these hosts. */
  hosts: string[];
  /** How many crops it has. */
  crops: number;
  /** Distinct requests its crops need (the load estimate it was balanced by). */
  estimatedRequests: number;
}

/** The host of a URL (lower case, with the port when one is given); `(unknown)` for what does not parse. */
export function hostOf(url: string): string {
  try {
    return new URL(url).host.toLowerCase();
  } catch {
    return '(unknown)';
  }
}

/** The host a crop is fetched from (its first piece's), which decides its shard. */
export function cropHost(crop: Pick<CropRequest, 'stitch'>): string {
  return hostOf(crop.stitch.pieces[0]?.url ?? '');
}

/** What one image server host is asked for: its crops and the distinct requests they need. */
export interface HostLoad {
  crops: number;
  requests: number;
}

/** The load of each host of some crops (exact: a request shared by crops, a level-0 tile say, counts once). */
export function hostLoads(crops: readonly Pick<CropRequest, 'stitch'>[]): Map<string, HostLoad> {
  const byHost = new Map<string, { crops: number; urls: Set<string> }>();
  for (const c of crops) {
    const host = cropHost(c);
    let e = byHost.get(host);
    if (!e) byHost.set(host, (e = { crops: 0, urls: new Set<string>() }));
    e.crops++;
    for (const p of c.stitch.pieces) e.urls.add(p.url);
  }
  return new Map([...byHost].map(([host, e]) => [host, { crops: e.crops, requests: e.urls.size }]));
}

/**
 * Splits hosts into `n` shards (pure): every crop of an image server host goes
 * to one shard, so N machines never multiply the load on one institution (each
 * host still sees at most the recipe's per-host limit, from one shard). Hosts are
 * weighed by the distinct requests their crops need and placed largest first on
 * the least-loaded shard (ties: the host name, the lowest shard), which keeps the
 * heaviest shard within 4/3 of the best possible (Graham 1969). A host added later
 * that is no larger than the existing ones goes last and moves none of them.
 */
export function partitionLoads(loads: ReadonlyMap<string, HostLoad>, n: number): ShardPlan[] {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`the number of shards must be a positive integer, got ${n}`);
  const shards: ShardPlan[] = Array.from({ length: n }, (_, index) => ({ index, hosts: [], crops: 0, estimatedRequests: 0 }));
  const hosts = [...loads.entries()].sort((a, b) => b[1].requests - a[1].requests || byString(a[0], b[0]));
  for (const [host, e] of hosts) {
    const target = shards.reduce((best, s) => (s.estimatedRequests < best.estimatedRequests ? s : best), shards[0]!);
    target.hosts.push(host);
    target.crops += e.crops;
    target.estimatedRequests += e.requests;
  }
  for (const s of shards) s.hosts.sort(byString);
  return shards;
}

/** Splits crops into `n` shards by host (pure; see `partitionLoads`). */
export function partitionByHost(crops: readonly Pick<CropRequest, 'stitch'>[], n: number): ShardPlan[] {
  return partitionLoads(hostLoads(crops), n);
}
