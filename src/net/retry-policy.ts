import { networkDefaults } from '../recipe/schema.ts';
import { seededUnit } from '../util/hash.ts';

/** Statuses worth another try (RFC 9110 semantics; 429 from RFC 6585). */
export const RETRY_STATUSES: ReadonlySet<number> = new Set([408, 429, 500, 502, 503, 504]);

/** Error codes of transient network faults. */
export const RETRY_ERROR_CODES: ReadonlySet<string> = new Set([
  'ETIMEDOUT', 'ECONNRESET', 'ECONNREFUSED', 'EPIPE', 'ENOTFOUND', 'ENETUNREACH', 'EAI_AGAIN', 'ECONNABORTED',
  'ERR_TRUNCATED', 'ERR_STREAM_PREMATURE_CLOSE',
]);

export interface RetryPolicy {
  /** Retries after the first attempt. */
  retries: number;
  /** First backoff step, doubled each attempt. */
  baseDelayMs: number;
  /** Cap on one backoff step. */
  maxDelayMs: number;
  /** The longest Retry-After we wait for; longer ones end the request with a reason. */
  maxRetryAfterMs: number;
  seed: string;
}

export const DEFAULT_RETRY_POLICY: RetryPolicy = { retries: networkDefaults().retries, baseDelayMs: 500, maxDelayMs: 30_000, maxRetryAfterMs: 120_000, seed: 'swatchbook' };

/**
 * Parses `Retry-After` in both its forms (RFC 9110 §10.2.3): delay-seconds, or an
 * HTTP-date. Returns milliseconds to wait (never negative), or undefined.
 */
export function parseRetryAfter(value: string | undefined, nowMs: number): number | undefined {
  if (value === undefined) return undefined;
  const v = value.trim();
  if (/^\d+$/.test(v)) return Number(v) * 1000;
  const t = Date.parse(v);
  if (Number.isNaN(t)) return undefined;
  return Math.max(0, t - nowMs);
}

export type RetryDecision = { retry: true; delayMs: number; reason: string } | { retry: false; reason: string };

/**
 * Decides whether attempt `attempt` (1-based, the one that just failed) is
 * followed by another, and after how long: exponential backoff
 * base·2^(attempt−1), capped, with jitter in [50%, 100%] drawn from the seed and
 * the URL (so reruns wait alike), and never less than the server's Retry-After.
 */
export function decideRetry(
  policy: RetryPolicy,
  failure: { attempt: number; url: string; status?: number; errorCode?: string; retryAfter?: string },
  nowMs: number,
): RetryDecision {
  const what = failure.status !== undefined ? `HTTP ${failure.status}` : (failure.errorCode ?? 'network error');
  const transient = failure.status !== undefined ? RETRY_STATUSES.has(failure.status) : failure.errorCode !== undefined && RETRY_ERROR_CODES.has(failure.errorCode);
  if (!transient) return { retry: false, reason: what };
  if (failure.attempt > policy.retries) return { retry: false, reason: `${what} after ${failure.attempt} attempts` };
  const step = Math.min(policy.maxDelayMs, policy.baseDelayMs * 2 ** (failure.attempt - 1));
  const jitter = 0.5 + 0.5 * seededUnit(policy.seed, 'retry', failure.url, failure.attempt);
  let delayMs = Math.round(step * jitter);
  const after = parseRetryAfter(failure.retryAfter, nowMs);
  if (after !== undefined) {
    if (after > policy.maxRetryAfterMs) return { retry: false, reason: `${what} with Retry-After ${Math.ceil(after / 1000)} s, longer than the ${policy.maxRetryAfterMs / 1000} s we wait` };
    delayMs = Math.max(delayMs, after);
  }
  return { retry: true, delayMs, reason: what };
}
