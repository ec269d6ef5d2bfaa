import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { backoffDelay, createRetryScheduler } from '../../../src/frames/live/backoff.ts';
import { manualClock } from './liveFixtures.ts';

describe('backoffDelay', () => {
  // check: AWS Architecture Blog, "Exponential Backoff and Jitter" (2015), full jitter:
  // sleep = random_between(0, min(cap, base * 2 ** attempt)); attempts counted from 1 here, so
  // the window of attempt n is min(cap, base · 2^(n−1)).
  it('stays in [0, min(maxMs, initialMs · factor^(attempt−1))) for any random draw', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 200 }),
        fc.double({ min: 0, max: 1, maxExcluded: true, noNaN: true }),
        fc.integer({ min: 1, max: 10_000 }),
        fc.integer({ min: 0, max: 1_000_000 }),
        fc.constantFrom(1, 1.5, 2, 3),
        (attempt, u, initialMs, extra, factor) => {
          const maxMs = initialMs + extra;
          const delay = backoffDelay(attempt, { initialMs, maxMs, factor }, () => u);
          const ceiling = Math.min(maxMs, initialMs * factor ** (attempt - 1));
          expect(Number.isInteger(delay)).toBe(true);
          expect(delay).toBeGreaterThanOrEqual(0);
          expect(delay).toBeLessThan(ceiling);
          // Full jitter: the draw maps linearly onto the whole window.
          expect(delay).toBe(Math.floor(u * ceiling));
        },
      ),
    );
  });

  it('uses the defaults 1000 ms, ×2, capped at 60000 ms', () => {
    const almostOne = 1 - Number.EPSILON;
    expect([1, 2, 3, 4, 5, 6, 7, 8].map((n) => backoffDelay(n, {}, () => almostOne))).toEqual([999, 1999, 3999, 7999, 15999, 31999, 59999, 59999]);
    expect(backoffDelay(1, {}, () => 0)).toBe(0);
    expect(backoffDelay(3, {}, () => 0.5)).toBe(2000);
    expect(backoffDelay(10_000, {}, () => 0.5)).toBe(30_000); // factor^n overflows to Infinity: still the cap
  });

  it('covers the whole window: draws spread over low and high halves', () => {
    // Full jitter, not "equal jitter" (which never goes below half the window).
    const draws = fc.sample(fc.double({ min: 0, max: 1, maxExcluded: true, noNaN: true }), { numRuns: 500, seed: 7 });
    const delays = draws.map((u) => backoffDelay(4, {}, () => u));
    expect(delays.some((d) => d < 1000)).toBe(true);
    expect(delays.some((d) => d > 7000)).toBe(true);
  });

  it('rejects bad arguments naming the field', () => {
    expect(() => backoffDelay(0)).toThrow(/attempt must be a whole number ≥ 1/);
    expect(() => backoffDelay(1.5)).toThrow(/attempt/);
    expect(() => backoffDelay(1, { initialMs: 0 })).toThrow(/backoff.initialMs/);
    expect(() => backoffDelay(1, { initialMs: 100, maxMs: 50 })).toThrow(/backoff.maxMs/);
    expect(() => backoffDelay(1, { factor: 0.5 })).toThrow(/backoff.factor/);
    expect(() => backoffDelay(1, {}, () => 1)).toThrow(/random\(\) must return a number in \[0, 1\)/);
  });
});

describe('createRetryScheduler', () => {
  it('counts attempts, waits the drawn delay, resets after success, cancels', () => {
    const clock = manualClock();
    const retry = createRetryScheduler({ initialMs: 100, maxMs: 1000, clock, random: () => 0.5 });
    let calls = 0;
    expect(retry.schedule(() => calls++)).toEqual({ attempt: 1, retryInMs: 50 });
    clock.advance(49);
    expect(calls).toBe(0);
    clock.advance(1);
    expect(calls).toBe(1);
    expect(retry.pending).toBe(false);
    expect(retry.schedule(() => calls++)).toEqual({ attempt: 2, retryInMs: 100 });
    expect(retry.schedule(() => calls++)).toEqual({ attempt: 3, retryInMs: 200 }); // replaces the pending one
    clock.advance(1000);
    expect(calls).toBe(2); // the replaced retry did not run
    retry.reset();
    expect(retry.attempt).toBe(0);
    expect(retry.schedule(() => calls++)).toEqual({ attempt: 1, retryInMs: 50 });
    retry.cancel();
    expect(clock.pending()).toBe(0);
    clock.advance(1000);
    expect(calls).toBe(2);
  });
});
