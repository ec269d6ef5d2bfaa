/**
 * An in-memory limiter of failed authentication attempts per client key (the remote address):
 * after `maxFailures` failures within a sliding window of `windowMs`, the key is refused until the
 * oldest of them leaves the window. A fixed bound on the keys kept stops a flood of addresses from
 * growing memory without limit (the oldest key is forgotten first).
 *
 * ```ts
 * const limiter = failureLimiter({ maxFailures: 2, windowMs: 60_000 });
 * limiter.fail('10.0.0.1'); limiter.fail('10.0.0.1');
 * limiter.retryAfterMs('10.0.0.1') // > 0: refuse with 429 and Retry-After
 * ```
 */

export interface FailureLimiterOptions {
  /** Failures within the window that block the key (inclusive: the next attempt is refused); ≥ 1, default 10. */
  readonly maxFailures?: number;
  /** Length of the sliding window, ms; ≥ 1, default 60 000. */
  readonly windowMs?: number;
  /** Most keys remembered; ≥ 1, default 10 000. */
  readonly maxKeys?: number;
  /** Clock, epoch ms; default `Date.now`. */
  readonly now?: () => number;
}

export interface FailureLimiter {
  /** 0 when the key may try; otherwise ms until it may try again. */
  retryAfterMs(key: string): number;
  /** Records one failure of the key; returns its failures within the window, this one included. */
  fail(key: string): number;
}

export function failureLimiter(options: FailureLimiterOptions = {}): FailureLimiter {
  const { maxFailures = 10, windowMs = 60_000, maxKeys = 10_000, now = Date.now } = options;
  for (const [name, v] of [['maxFailures', maxFailures], ['windowMs', windowMs], ['maxKeys', maxKeys]] as const) {
    if (!(Number.isInteger(v) && v >= 1)) throw new RangeError(`options.${name} must be a whole number ≥ 1, got ${String(v)}`);
  }
  /** Failure times per key, oldest first; Map order = least recently failed first. */
  const failures = new Map<string, number[]>();
  const recent = (key: string, t: number): number[] => {
    const list = failures.get(key);
    if (!list) return [];
    while (list.length > 0 && list[0] <= t - windowMs) list.shift();
    if (list.length === 0) failures.delete(key);
    return list;
  };
  return {
    retryAfterMs(key) {
      const t = now();
      const list = recent(key, t);
      return list.length >= maxFailures ? Math.max(1, list[list.length - maxFailures] + windowMs - t) : 0;
    },
    fail(key) {
      const t = now();
      const list = recent(key, t);
      list.push(t);
      if (list.length > maxFailures) list.splice(0, list.length - maxFailures);
      failures.delete(key);
      failures.set(key, list);
      while (failures.size > maxKeys) failures.delete(failures.keys().next().value as string);
      return list.length;
    },
  };
}
