/**
 * Per-host politeness: at most `perHost` requests in flight to one host, starts
 * at least 1/`ratePerSecond` apart, and a host-wide pause (after 429/503 with
 * Retry-After) that every later request to that host waits out.
 */
export interface HostGateOptions {
  perHost: number;
  ratePerSecond: number;
  now: () => number;
  sleep: (ms: number) => Promise<void>;
}

interface HostState {
  inFlight: number;
  maxInFlight: number;
  nextStart: number;
  pausedUntil: number;
  waiters: (() => void)[];
}

export class HostGate {
  private readonly hosts = new Map<string, HostState>();
  constructor(private readonly opts: HostGateOptions) {
    if (!(opts.perHost >= 1)) throw new RangeError('perHost must be at least 1');
    if (!(opts.ratePerSecond > 0)) throw new RangeError('ratePerSecond must be positive');
  }

  private state(host: string): HostState {
    let s = this.hosts.get(host);
    if (!s) {
      s = { inFlight: 0, maxInFlight: 0, nextStart: 0, pausedUntil: 0, waiters: [] };
      this.hosts.set(host, s);
    }
    return s;
  }

  /** Runs fn when the host has a free slot and its pacing allows. */
  async run<T>(host: string, fn: () => Promise<T>): Promise<T> {
    const s = this.state(host);
    while (s.inFlight >= this.opts.perHost) await new Promise<void>((resolve) => s.waiters.push(resolve));
    s.inFlight++;
    s.maxInFlight = Math.max(s.maxInFlight, s.inFlight);
    try {
      // Reserve a start time synchronously so concurrent callers space out.
      for (;;) {
        const now = this.opts.now();
        const start = Math.max(now, s.nextStart, s.pausedUntil);
        if (start <= now) {
          s.nextStart = now + 1000 / this.opts.ratePerSecond;
          break;
        }
        await this.opts.sleep(start - now);
      }
      return await fn();
    } finally {
      s.inFlight--;
      s.waiters.shift()?.();
    }
  }

  /** Holds every request to `host` until `untilMs`. */
  pause(host: string, untilMs: number): void {
    const s = this.state(host);
    s.pausedUntil = Math.max(s.pausedUntil, untilMs);
  }

  /** The most requests ever in flight at once to `host` (for reports and tests). */
  maxInFlight(host: string): number {
    return this.hosts.get(host)?.maxInFlight ?? 0;
  }
  inFlight(host: string): number {
    return this.hosts.get(host)?.inFlight ?? 0;
  }
}
