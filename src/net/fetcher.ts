import got from 'got';
import dns from 'node:dns';
import type { IncomingHttpHeaders } from 'node:http';
import { isNonPublicHost } from './address-policy.ts';
import { FetchError, redactUrl } from '../errors.ts';
import { ContentCache, ResponseFacts } from './cache.ts';
import { checkContent } from './content-check.ts';
import { HostGate } from './host-gate.ts';
import { lockedEntry, LockFile } from './lock.ts';
import { decideRetry, RetryPolicy, DEFAULT_RETRY_POLICY } from './retry-policy.ts';
import { networkDefaults } from '../recipe/schema.ts';
import { VERSION } from '../version.ts';

export type FetchKind = 'json' | 'image';

/**
 * How the cache and the network are used:
 * - `online`: cache first, network for what is missing;
 * - `offline`: cache only;
 * - `frozen`: only URLs in the lock, and only bodies whose hash the lock records;
 * - `refresh`: always ask the network (verify --refetch), still recording into the cache.
 */
export type FetchMode = 'online' | 'offline' | 'frozen' | 'refresh';

export interface FetcherOptions {
  cache: ContentCache;
  mode: FetchMode;
  lock?: LockFile;
  concurrency: number;
  perHost: number;
  perHostRate: number;
  timeoutMs: number;
  retry: RetryPolicy;
  contact?: string;
  maxBytes: Record<FetchKind, number>;
  maxRedirects: number;
  /** Host names (or `*.suffix`) that may be contacted, also after redirects; undefined allows all. */
  allowHosts?: string[];
  /**
   * Refuse loopback, private and link-local addresses (by name or once resolved, redirects
   * included) unless the host is in `trustedHosts` or `allowHosts`: a document from a public
   * server must not make swatchbook reach into the harvesting machine's own network.
   */
  guardNonPublic?: boolean;
  /** Host names the user named (the recipe's sources): exempt from `guardNonPublic`. */
  trustedHosts?: string[];
  now: () => number;
  sleep: (ms: number) => Promise<void>;
  warn: (message: string) => void;
  onEvent?: (event: FetchEvent) => void;
}

export type FetchEvent =
  | { type: 'cache-hit'; url: string }
  | { type: 'request'; url: string; attempt: number }
  | { type: 'response'; url: string; status: number; bytes: number }
  | { type: 'retry'; url: string; attempt: number; delayMs: number; reason: string }
  | { type: 'failed'; url: string; reason: string };

export interface Fetched {
  facts: ResponseFacts;
  body: Buffer;
  fromCache: boolean;
  attempts: number;
}

export interface FetchStats {
  requests: number;
  served: number;
  fromCache: number;
  failed: number;
  bytes: number;
  retries: number;
}

const { retries: _retries, ...networkDefault } = networkDefaults();

/** Defaults for a fetcher made without a recipe: the politeness values come from the recipe schema's defaults. */
export const DEFAULT_FETCHER_OPTIONS = {
  ...networkDefault,
  maxBytes: { json: 20 * 1024 * 1024, image: 200 * 1024 * 1024 },
  maxRedirects: 5,
} as const;

const sleepReal = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, ms));

class AttemptFailure extends Error {
  constructor(
    readonly reason: string,
    readonly fields: { status?: number; errorCode?: string; retryAfter?: string; permanent?: boolean },
  ) {
    super(reason);
  }
}

/** The one edge where swatchbook touches the network. */
export class Fetcher {
  readonly options: FetcherOptions;
  readonly gate: HostGate;
  readonly stats: FetchStats = { requests: 0, served: 0, fromCache: 0, failed: 0, bytes: 0, retries: 0 };
  /** Facts of every URL served in this run (cache or network): the lock's rows. */
  readonly used = new Map<string, ResponseFacts>();
  private readonly inFlight = new Map<string, Promise<Fetched>>();
  private readonly globalWaiters: (() => void)[] = [];
  private globalActive = 0;
  private warnedContact = false;

  constructor(options: Partial<FetcherOptions> & Pick<FetcherOptions, 'cache' | 'mode'>) {
    this.options = {
      ...DEFAULT_FETCHER_OPTIONS,
      retry: DEFAULT_RETRY_POLICY,
      now: Date.now,
      sleep: sleepReal,
      // The library never writes to stderr by itself: warnings reach whoever passes `warn` (the CLI does).
      warn: () => {},
      ...options,
    } as FetcherOptions;
    this.gate = new HostGate({ perHost: this.options.perHost, ratePerSecond: this.options.perHostRate, now: this.options.now, sleep: this.options.sleep });
  }

  /** Adds a host the user named (in the recipe, a local file or a sheet) to the trusted hosts. */
  trustHost(hostname: string): void {
    const list = (this.options.trustedHosts ??= []);
    if (!list.includes(hostname.toLowerCase())) list.push(hostname.toLowerCase());
  }

  userAgent(): string {
    const contact = this.options.contact ? `; ${this.options.contact}` : '';
    return `swatchbook/${VERSION} (+https://www.npmjs.com/package/swatchbook${contact})`;
  }

  /** Fetches one URL (deduplicated while in flight). Throws FetchError when it cannot be served. */
  get(url: string, kind: FetchKind): Promise<Fetched> {
    const key = `${kind} ${url}`;
    let p = this.inFlight.get(key);
    if (!p) {
      p = this.serve(url, kind).finally(() => this.inFlight.delete(key));
      this.inFlight.set(key, p);
    }
    return p;
  }

  private async serve(url: string, kind: FetchKind): Promise<Fetched> {
    try {
      const result = await this.serveInner(url, kind);
      this.used.set(url, result.facts);
      this.stats.served++;
      if (result.fromCache) this.stats.fromCache++;
      return result;
    } catch (err) {
      this.stats.failed++;
      const fe = err instanceof FetchError ? err : new FetchError(url, (err as Error).message, { attempts: 0 }, { cause: err });
      this.options.onEvent?.({ type: 'failed', url: redactUrl(url), reason: fe.reason });
      throw fe;
    }
  }

  private async serveInner(url: string, kind: FetchKind): Promise<Fetched> {
    this.checkUrl(url, url);
    const { mode, lock, cache } = this.options;
    const locked = lockedEntry(lock, url);
    if (mode === 'frozen' && !locked) throw new FetchError(url, 'not in the lock file (--frozen allows only locked requests)', { attempts: 0, code: 'E_FROZEN' });
    if (mode !== 'refresh') {
      const hit = await cache.lookup(url);
      if (hit && (!locked || mode !== 'frozen' || hit.facts.sha256 === locked.sha256)) {
        this.options.onEvent?.({ type: 'cache-hit', url: redactUrl(url) });
        return { facts: hit.facts, body: hit.body, fromCache: true, attempts: 0 };
      }
      if (mode === 'frozen' && locked) {
        // The body the lock names may be cached under another URL's ref.
        const body = await cache.getBody(locked.sha256);
        if (body) return { facts: { url, ...locked }, body, fromCache: true, attempts: 0 };
      }
    }
    if (mode === 'offline') throw new FetchError(url, 'not in the cache, and this run may not fetch (offline; run harvest or run first)', { attempts: 0, code: 'E_OFFLINE' });
    const fetched = await this.fetchWithRetries(url, kind);
    if (mode === 'frozen' && locked && fetched.facts.sha256 !== locked.sha256) {
      throw new FetchError(url, `body changed at the source: the lock has sha256 ${locked.sha256}, the server sent ${fetched.facts.sha256}`, { attempts: fetched.attempts, code: 'E_FROZEN' });
    }
    return fetched;
  }

  private async withGlobalSlot<T>(fn: () => Promise<T>): Promise<T> {
    while (this.globalActive >= this.options.concurrency) await new Promise<void>((r) => this.globalWaiters.push(r));
    this.globalActive++;
    try {
      return await fn();
    } finally {
      this.globalActive--;
      this.globalWaiters.shift()?.();
    }
  }

  private checkUrl(url: string, original: string): URL {
    let parsed: URL;
    try {
      parsed = new URL(url);
    } catch {
      throw new FetchError(original, `not a valid URL: ${redactUrl(url)}`, { attempts: 0 });
    }
    if (parsed.protocol !== 'http:' && parsed.protocol !== 'https:') {
      throw new FetchError(original, `refused scheme ${parsed.protocol} (only http and https)`, { attempts: 0 });
    }
    const allow = this.options.allowHosts;
    if (allow && !allow.some((h) => hostMatches(parsed.hostname, h))) {
      throw new FetchError(original, `host ${parsed.hostname} is not in network.allowHosts`, { attempts: 0, code: 'E_REFUSED' });
    }
    if (this.options.guardNonPublic && !this.isTrusted(parsed.hostname) && isNonPublicHost(parsed.hostname)) {
      throw new FetchError(original, refusedText(parsed.hostname, url !== original ? ' (after a redirect)' : ''), { attempts: 0, code: 'E_REFUSED' });
    }
    return parsed;
  }

  private isTrusted(hostname: string): boolean {
    const h = hostname.toLowerCase().replace(/^\[|\]$/g, '');
    return (this.options.trustedHosts ?? []).some((t) => t.toLowerCase().replace(/^\[|\]$/g, '') === h) || (this.options.allowHosts ?? []).some((p) => hostMatches(h, p));
  }

  /** A DNS lookup that refuses non-public answers for hosts nobody trusted (a public name pointing at 127.0.0.1). */
  private guardedLookup(hostname: string): typeof dns.lookup | undefined {
    if (!this.options.guardNonPublic || this.isTrusted(hostname)) return undefined;
    return ((host: string, options: dns.LookupOptions, callback: (err: NodeJS.ErrnoException | null, address: string | dns.LookupAddress[], family?: number) => void) => {
      dns.lookup(host, { ...options, all: true }, (err, addresses) => {
        if (err) return callback(err, '', 0);
        const bad = addresses.find((a) => isNonPublicHost(a.address));
        if (bad) return callback(Object.assign(new Error(refusedText(`${host} (${bad.address})`, '')), { code: 'ERR_NON_PUBLIC_ADDRESS' }), '', 0);
        if (options.all) return callback(null, addresses);
        callback(null, addresses[0].address, addresses[0].family);
      });
    }) as unknown as typeof dns.lookup;
  }

  private async fetchWithRetries(url: string, kind: FetchKind): Promise<Fetched> {
    if (!this.options.contact && !this.warnedContact) {
      this.warnedContact = true;
      this.options.warn('no network.contact in the recipe: servers cannot tell who is harvesting; please add an e-mail or URL');
    }
    for (let attempt = 1; ; attempt++) {
      try {
        // The slot covers the request only: writing the cache or waiting out a back-off leaves it to the next request.
        const { facts, body } = await this.withGlobalSlot(() => this.attempt(url, kind, attempt));
        const sha = await this.options.cache.putBody(body);
        const full: ResponseFacts = { ...facts, sha256: sha };
        // A refresh (verify --refetch) looks without moving what builds use: refs stay as they were.
        if (this.options.mode !== 'refresh') await this.options.cache.putRef(full);
        return { facts: full, body, fromCache: false, attempts: attempt };
      } catch (err) {
        if (err instanceof FetchError) throw err;
        const f = err instanceof AttemptFailure ? err : new AttemptFailure((err as Error).message, { errorCode: (err as { code?: string }).code });
        const decision = f.fields.permanent ? { retry: false as const, reason: f.reason } : decideRetry(this.options.retry, { attempt, url, ...f.fields }, this.options.now());
        if (!decision.retry) {
          const reason = f.fields.permanent || f.reason === decision.reason ? f.reason : decision.reason.startsWith(f.reason) ? decision.reason : `${f.reason}; ${decision.reason}`;
          throw new FetchError(url, reason, { status: f.fields.status, attempts: attempt }, { cause: err });
        }
        this.stats.retries++;
        this.options.onEvent?.({ type: 'retry', url: redactUrl(url), attempt, delayMs: decision.delayMs, reason: f.reason });
        if (f.fields.retryAfter !== undefined && (f.fields.status === 429 || f.fields.status === 503)) {
          this.gate.pause(new URL(url).host, this.options.now() + decision.delayMs);
        }
        await this.options.sleep(decision.delayMs);
      }
    }
  }

  /** One attempt, following redirects by hand so every hop is checked. */
  private async attempt(url: string, kind: FetchKind, attempt: number): Promise<{ facts: Omit<ResponseFacts, 'sha256'>; body: Buffer }> {
    let current = url;
    const visited = new Set<string>();
    for (let hop = 0; ; hop++) {
      const parsed = this.checkUrl(current, url);
      if (visited.has(current)) throw new FetchError(url, `redirect loop at ${redactUrl(current)}`, { attempts: attempt });
      visited.add(current);
      if (hop > this.options.maxRedirects) throw new FetchError(url, `more than ${this.options.maxRedirects} redirects`, { attempts: attempt });
      const res = await this.gate.run(parsed.host, () => this.request(current, kind, attempt));
      if ([301, 302, 303, 307, 308].includes(res.status)) {
        const location = header(res.headers, 'location');
        if (!location) throw new AttemptFailure(`HTTP ${res.status} without a Location header`, { status: res.status, permanent: true });
        current = new URL(location, current).toString();
        continue;
      }
      if (res.status !== 200) {
        throw new AttemptFailure(`HTTP ${res.status}`, { status: res.status, retryAfter: header(res.headers, 'retry-after') });
      }
      const contentType = header(res.headers, 'content-type') ?? '';
      const bad = checkContent(kind, contentType, res.body);
      if (bad) throw new AttemptFailure(bad, { status: 200, permanent: true });
      const etag = header(res.headers, 'etag');
      const lastModified = header(res.headers, 'last-modified');
      return {
        facts: {
          url,
          finalUrl: redactUrl(current),
          size: res.body.length,
          contentType: contentType.split(';')[0].trim(),
          ...(etag !== undefined ? { etag } : {}),
          ...(lastModified !== undefined ? { lastModified } : {}),
        },
        body: res.body,
      };
    }
  }

  private async request(url: string, kind: FetchKind, attempt: number): Promise<{ status: number; headers: IncomingHttpHeaders; body: Buffer }> {
    this.stats.requests++;
    this.options.onEvent?.({ type: 'request', url: redactUrl(url), attempt });
    const cap = this.options.maxBytes[kind];
    const lookup = this.guardedLookup(new URL(url).hostname);
    const stream = got.stream(url, {
      ...(lookup ? { dnsLookup: lookup as never } : {}),
      followRedirect: false,
      throwHttpErrors: false,
      retry: { limit: 0 },
      timeout: { request: this.options.timeoutMs },
      decompress: true,
      http2: false,
      headers: {
        'user-agent': this.userAgent(),
        accept: kind === 'json' ? 'application/ld+json, application/json;q=0.9, */*;q=0.1' : 'image/*;q=0.9, */*;q=0.1',
      },
    });
    const chunks: Buffer[] = [];
    let size = 0;
    let status = 0;
    let headers: IncomingHttpHeaders = {};
    try {
      stream.on('response', (r: { statusCode: number; headers: IncomingHttpHeaders }) => {
        status = r.statusCode;
        headers = r.headers;
        const declared = Number(header(r.headers, 'content-length'));
        if (Number.isFinite(declared) && declared > cap) stream.destroy(Object.assign(new Error(`body of ${declared} bytes is larger than the ${cap}-byte cap`), { code: 'ERR_BODY_TOO_LARGE' }));
      });
      for await (const chunk of stream) {
        size += (chunk as Buffer).length;
        if (size > cap) {
          stream.destroy();
          throw new AttemptFailure(`body larger than the ${cap}-byte cap`, { permanent: true });
        }
        chunks.push(chunk as Buffer);
      }
    } catch (err) {
      if (err instanceof AttemptFailure) throw err;
      const code = (err as { code?: string }).code;
      if (code === 'ERR_BODY_TOO_LARGE') throw new AttemptFailure((err as Error).message, { permanent: true });
      if (code === 'ERR_NON_PUBLIC_ADDRESS') throw new FetchError(url, (err as Error).message, { attempts: attempt, code: 'E_REFUSED' });
      const declared = Number(header(headers, 'content-length'));
      if (status === 200 && Number.isFinite(declared) && size < declared) {
        throw new AttemptFailure(`truncated body: ${size} of ${declared} bytes`, { errorCode: 'ERR_TRUNCATED' });
      }
      throw new AttemptFailure(`${code ?? 'network error'}: ${(err as Error).message}`, { errorCode: code ?? 'ECONNRESET' });
    }
    const body = Buffer.concat(chunks);
    this.stats.bytes += body.length;
    this.options.onEvent?.({ type: 'response', url: redactUrl(url), status, bytes: body.length });
    const declared = header(headers, 'content-length');
    const encoded = header(headers, 'content-encoding');
    if (status === 200 && declared !== undefined && (encoded === undefined || encoded === 'identity') && Number(declared) !== body.length) {
      throw new AttemptFailure(`truncated body: ${body.length} of ${declared} bytes`, { errorCode: 'ERR_TRUNCATED' });
    }
    return { status, headers, body };
  }
}

function header(headers: IncomingHttpHeaders, name: string): string | undefined {
  const v = headers[name];
  return Array.isArray(v) ? v[0] : v;
}

function refusedText(host: string, after: string): string {
  return `refused ${host}${after}: a loopback, private or link-local address the recipe does not name (add the host to network.allowHosts to allow it)`;
}

export function hostMatches(host: string, pattern: string): boolean {
  const h = host.toLowerCase(), p = pattern.toLowerCase();
  return p.startsWith('*.') ? h.endsWith(p.slice(1)) || h === p.slice(2) : h === p;
}
