/**
 * Reconnection delays: exponential backoff with "full jitter", after Marc Brooker, "Exponential
 * Backoff and Jitter", AWS Architecture Blog, 4 March 2015:
 *
 *   sleep = random_between(0, min(cap, base · 2^attempt))
 *
 * Full jitter spreads the retries of many clients that failed together (a switch rebooted, every
 * camera dropped at once) uniformly over the whole window, so they do not come back in lockstep.
 * Here `base` is `initialMs`, `cap` is `maxMs`, the growth `factor` (2 in the article) is an
 * option, and attempts are counted from 1: the first retry waits in [0, initialMs), the second in
 * [0, initialMs · factor), … never more than maxMs.
 */
import { systemClock, type Clock } from './clock.ts';

export interface BackoffOptions {
  /** Upper end of the first delay window, milliseconds, a number > 0. Default 1000. */
  initialMs?: number;
  /** Largest delay window, milliseconds, a number ≥ initialMs. Default 60000. */
  maxMs?: number;
  /** Growth of the window per attempt, a number ≥ 1. Default 2. */
  factor?: number;
}

/**
 * The delay before retry number `attempt` (a whole number ≥ 1): a whole number of milliseconds in
 * [0, ceiling), ceiling = min(maxMs, initialMs · factor^(attempt − 1)), drawn as
 * floor(random() · ceiling). Pure given `random` (uniform in [0, 1), like Math.random).
 *
 * Example: backoffDelay(3, {}, () => 0.5) = 2000 (window [0, 4000)); backoffDelay(30, {}, () => 0.5) = 30000.
 */
export function backoffDelay(attempt: number, options: BackoffOptions = {}, random: () => number = Math.random): number {
  const { initialMs, maxMs, factor } = resolveBackoffOptions(options);
  if (!(Number.isInteger(attempt) && attempt >= 1)) throw new RangeError(`attempt must be a whole number ≥ 1, got ${String(attempt)}`);
  // factor^(attempt − 1) overflows to Infinity for large attempts; min() then gives maxMs.
  const ceiling = Math.min(maxMs, initialMs * factor ** (attempt - 1));
  const u = random();
  if (!(u >= 0 && u < 1)) throw new RangeError(`random() must return a number in [0, 1), got ${String(u)}`);
  return Math.floor(u * ceiling);
}

/** {@link BackoffOptions} with defaults applied, checked with messages naming the field. */
export function resolveBackoffOptions(options: BackoffOptions = {}): Required<BackoffOptions> {
  const { initialMs = 1000, maxMs = 60_000, factor = 2 } = options;
  if (!(typeof initialMs === 'number' && initialMs > 0 && Number.isFinite(initialMs))) {
    throw new RangeError(`backoff.initialMs must be a number > 0 (milliseconds), got ${String(initialMs)}`);
  }
  if (!(typeof maxMs === 'number' && maxMs >= initialMs && Number.isFinite(maxMs))) {
    throw new RangeError(`backoff.maxMs must be a number ≥ initialMs (${initialMs} ms), got ${String(maxMs)}`);
  }
  if (!(typeof factor === 'number' && factor >= 1 && Number.isFinite(factor))) {
    throw new RangeError(`backoff.factor must be a number ≥ 1, got ${String(factor)}`);
  }
  return { initialMs, maxMs, factor };
}

export interface RetrySchedulerOptions extends BackoffOptions {
  /** Uniform random numbers in [0, 1). Default Math.random. */
  random?: () => number;
  /** Timers. Default the system clock. */
  clock?: Clock;
}

/** A retry timer driven by {@link backoffDelay}. */
export interface RetryScheduler {
  /** Failed attempts since the last reset (0 after a reset). */
  readonly attempt: number;
  /** Whether a retry is pending. */
  readonly pending: boolean;
  /**
   * Counts one more failed attempt and calls `retry` after its backoff delay. A retry already
   * pending is cancelled first (at most one at a time). Returns the attempt number and the delay.
   */
  schedule(retry: () => void): { attempt: number; retryInMs: number };
  /** After a successful connection: the next failure waits in the first window again. */
  reset(): void;
  /** Cancels a pending retry (on stop). */
  cancel(): void;
}

/**
 * A small scheduler around {@link backoffDelay}: `schedule` after each failure, `reset` once
 * connected, `cancel` on stop.
 *
 * Example: const retry = createRetryScheduler(); on failure `const { attempt, retryInMs } =
 * retry.schedule(connect)`; once online `retry.reset()`.
 */
export function createRetryScheduler(options: RetrySchedulerOptions = {}): RetryScheduler {
  const { random = Math.random, clock = systemClock, ...backoff } = options;
  const resolved = resolveBackoffOptions(backoff);
  let attempt = 0;
  let timer: unknown;
  let pending = false;
  const cancel = (): void => {
    if (pending) clock.clearTimeout(timer);
    pending = false;
    timer = undefined;
  };
  return {
    get attempt() {
      return attempt;
    },
    get pending() {
      return pending;
    },
    schedule(retry) {
      cancel();
      attempt++;
      const retryInMs = backoffDelay(attempt, resolved, random);
      pending = true;
      timer = clock.setTimeout(() => {
        pending = false;
        timer = undefined;
        retry();
      }, retryInMs);
      return { attempt, retryInMs };
    },
    reset() {
      attempt = 0;
    },
    cancel,
  };
}
