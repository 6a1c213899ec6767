import type { CropRequest } from '../plan/crop-request.ts';
import { byString, sha256Hex } from '../util/hash.ts';

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

/**
 * The load of each image server host, gathered a crop at a time: its crops and
 * its distinct requests (counted by a 52-bit hash of each URL, so a plan of a
 * million requests is weighed without holding their URLs; a collision, at odds
 * of about n²/2⁵³, undercounts one request of an estimate).
 */
export class HostLoads {
  private readonly byHost = new Map<string, { crops: number; urls: Set<number> }>();
  add(crop: Pick<CropRequest, 'stitch'>): void {
    const host = cropHost(crop);
    let e = this.byHost.get(host);
    if (!e) this.byHost.set(host, (e = { crops: 0, urls: new Set<number>() }));
    e.crops++;
    for (const p of crop.stitch.pieces) e.urls.add(urlHash(p.url));
  }

  /**
   * Splits the hosts into `n` shards: every crop of an image server host goes to
   * one shard, so N machines never multiply the load on one institution (each
   * host still sees at most the recipe's per-host limit, from one shard). Hosts
   * are weighed by the distinct requests their crops need and placed largest
   * first on the least-loaded shard (ties: the host name, the lowest shard), which
   * keeps the heaviest shard within 4/3 of the best possible (Graham 1969). A
   * host added later that is no larger than the existing ones goes last and moves none of them.
   */
  partition(n: number): ShardPlan[] {
    if (!Number.isInteger(n) || n < 1) throw new RangeError(`the number of shards must be a positive integer, got ${n}`);
    const shards: ShardPlan[] = Array.from({ length: n }, (_, index) => ({ index, hosts: [], crops: 0, estimatedRequests: 0 }));
    const hosts = [...this.byHost.entries()].sort((a, b) => b[1].urls.size - a[1].urls.size || byString(a[0], b[0]));
    for (const [host, e] of hosts) {
      const target = shards.reduce((best, s) => (s.estimatedRequests < best.estimatedRequests ? s : best), shards[0]!);
      target.hosts.push(host);
      target.crops += e.crops;
      target.estimatedRequests += e.urls.size;
    }
    for (const s of shards) s.hosts.sort(byString);
    return shards;
  }
}

/** Splits crops into `n` shards by host (pure; see `HostLoads.partition`). */
export function partitionByHost(crops: readonly Pick<CropRequest, 'stitch'>[], n: number): ShardPlan[] {
  const loads = new HostLoads();
  for (const c of crops) loads.add(c);
  return loads.partition(n);
}

function urlHash(url: string): number {
  return parseInt(sha256Hex(url).slice(0, 13), 16);
}
