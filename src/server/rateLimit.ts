/**
 * A sliding-window rate limit per key: at most `max` starts within any `windowMs`, and, when
 * `minGapMs` is set, none sooner than that after the last one. `take(key)` records a start and
 * returns 0, or returns how long to wait (ms, > 0) and records nothing.
 *
 * ```ts
 * const limit = rateLimit({ max: 2, windowMs: 1000 });
 * limit.take('door'); limit.take('door'); // 0, 0
 * limit.take('door');                     // ≈ 1000: wait until the first start leaves the window
 * ```
 */
export interface RateLimitOptions {
  /** Starts allowed per window, ≥ 1. */
  readonly max: number;
  /** The window, ms, > 0. */
  readonly windowMs: number;
  /** Least time between two starts, ms; default 0. */
  readonly minGapMs?: number;
  /** Clock, epoch ms; default Date.now. */
  readonly clock?: () => number;
}

export interface RateLimit {
  take(key: string): number;
}

export function rateLimit(options: RateLimitOptions): RateLimit {
  const { max, windowMs, minGapMs = 0, clock = Date.now } = options;
  if (!(Number.isInteger(max) && max >= 1)) throw new RangeError(`options.max must be a whole number ≥ 1, got ${max}`);
  if (!(windowMs > 0)) throw new RangeError(`options.windowMs must be > 0, got ${windowMs}`);
  const starts = new Map<string, number[]>();
  return {
    take(key) {
      const now = clock();
      const recent = (starts.get(key) ?? []).filter((t) => now - t < windowMs);
      let wait = 0;
      if (recent.length >= max) wait = recent[recent.length - max] + windowMs - now;
      if (recent.length > 0) wait = Math.max(wait, recent[recent.length - 1] + minGapMs - now);
      if (wait > 0) {
        starts.set(key, recent);
        return wait;
      }
      recent.push(now);
      starts.set(key, recent);
      if (starts.size > 10_000) for (const [k, times] of starts) if (times.every((t) => now - t >= windowMs)) starts.delete(k);
      return 0;
    },
  };
}
