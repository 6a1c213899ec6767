import { FailureRecord, FetchError, failureFrom } from '../errors.ts';

export type { FailureRecord } from '../errors.ts';
import type { Fetcher, Fetched } from '../net/fetcher.ts';
import type { CropRequest, Piece } from '../plan/crop-request.ts';
import { byString } from '../util/hash.ts';
import { imageSize } from '../image/image-size.ts';


export interface PieceOutcome {
  url: string;
  sha256: string;
  fromCache: boolean;
  width: number;
  height: number;
}

export interface HarvestResult {
  /** Crops whose every piece was fetched and has the expected size, by key. */
  served: Map<string, PieceOutcome[]>;
  failures: FailureRecord[];
  summary: { crops: number; served: number; failed: number; requests: number; fromCache: number; bytes: number; retries: number; uniquePieces: number };
}

/** Fetches a piece, trying its other spelling when the first answers 404. */
export async function fetchPiece(fetcher: Fetcher, piece: Piece): Promise<Fetched> {
  try {
    return await fetcher.get(piece.url, 'image');
  } catch (err) {
    if (piece.fallbackUrl && err instanceof FetchError && err.status === 404) return fetcher.get(piece.fallbackUrl, 'image');
    throw err;
  }
}

/**
 * Fetches every piece of every crop into the cache. Pieces shared by several
 * crops (level-0 tiles) are fetched once. Each image is checked from its header:
 * its size must match the request within the piece's tolerance, else the crop
 * is a recorded failure. Results and failures are ordered by key, never by arrival.
 */
export async function harvestCrops(
  crops: readonly CropRequest[],
  fetcher: Fetcher,
  opts: { onProgress?: (done: number, total: number) => void; pixelLimit?: number } = {},
): Promise<HarvestResult> {
  const byUrl = new Map<string, Piece>();
  for (const c of crops) for (const p of c.stitch.pieces) if (!byUrl.has(p.url)) byUrl.set(p.url, p);
  const urls = [...byUrl.keys()].sort(byString);
  const outcome = new Map<string, { ok: PieceOutcome } | { error: FailureRecord }>();
  let done = 0;
  const before = { ...fetcher.stats };
  await Promise.all(
    urls.map(async (url) => {
      const piece = byUrl.get(url)!;
      try {
        const got: Fetched = await fetchPiece(fetcher, piece);
        const size = await imageSize(got.body, opts.pixelLimit).catch((err: Error) => {
          throw new FetchError(url, `not a usable image: ${err.message}`, { attempts: got.attempts });
        });
        if (Math.abs(size.width - piece.expectWidth) > piece.tolerance || Math.abs(size.height - piece.expectHeight) > piece.tolerance) {
          throw new FetchError(url, `the server returned ${size.width}×${size.height} for a ${piece.expectWidth}×${piece.expectHeight} request (a size limit applied silently, or a wrong scale)`, { attempts: got.attempts, status: 200 });
        }
        outcome.set(url, { ok: { url: got.facts.url, sha256: got.facts.sha256, fromCache: got.fromCache, width: size.width, height: size.height } });
      } catch (err) {
        const fe = err instanceof FetchError ? err : new FetchError(url, (err as Error).message, { attempts: 0 });
        outcome.set(url, { error: failureFrom('crop', '', fe) });
      } finally {
        opts.onProgress?.(++done, urls.length);
      }
    }),
  );
  const served = new Map<string, PieceOutcome[]>();
  const failures: FailureRecord[] = [];
  for (const crop of [...crops].sort((a, b) => byString(a.key, b.key))) {
    const pieces: PieceOutcome[] = [];
    let failed: FailureRecord | undefined;
    for (const p of crop.stitch.pieces) {
      const o = outcome.get(p.url)!;
      if ('error' in o) {
        failed ??= { ...o.error, key: crop.key };
      } else pieces.push(o.ok);
    }
    if (failed) failures.push(failed);
    else served.set(crop.key, pieces);
  }
  const s = fetcher.stats;
  return {
    served,
    failures,
    summary: {
      crops: crops.length,
      served: served.size,
      failed: failures.length,
      requests: s.requests - before.requests,
      fromCache: s.fromCache - before.fromCache,
      bytes: s.bytes - before.bytes,
      retries: s.retries - before.retries,
      uniquePieces: urls.length,
    },
  };
}
