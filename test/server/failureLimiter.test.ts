import { describe, expect, it } from 'vitest';
import { failureLimiter } from '../../src/server/failureLimiter.ts';

describe('failureLimiter', () => {
  it('blocks a key after maxFailures within the window until the oldest leaves it', () => {
    let t = 0;
    const limiter = failureLimiter({ maxFailures: 3, windowMs: 60_000, now: () => t });
    limiter.fail('a');
    t = 10_000;
    limiter.fail('a');
    expect(limiter.retryAfterMs('a')).toBe(0);
    t = 20_000;
    limiter.fail('a');
    // three failures at 0, 10 s, 20 s: blocked until the first is 60 s old
    expect(limiter.retryAfterMs('a')).toBe(40_000);
    expect(limiter.retryAfterMs('b')).toBe(0);
    t = 59_999;
    expect(limiter.retryAfterMs('a')).toBe(1);
    t = 60_000;
    expect(limiter.retryAfterMs('a')).toBe(0);
  });

  it('forgets the least recently failing key beyond maxKeys', () => {
    let t = 0;
    const limiter = failureLimiter({ maxFailures: 1, maxKeys: 2, now: () => t });
    limiter.fail('a');
    t = 1;
    limiter.fail('b');
    t = 2;
    limiter.fail('c');
    expect(limiter.retryAfterMs('a')).toBe(0);
    expect(limiter.retryAfterMs('b')).toBeGreaterThan(0);
    expect(limiter.retryAfterMs('c')).toBeGreaterThan(0);
  });

  it('refuses nonsense options, naming them', () => {
    expect(() => failureLimiter({ maxFailures: 0 })).toThrow(/options\.maxFailures/);
    expect(() => failureLimiter({ windowMs: 1.5 })).toThrow(/options\.windowMs/);
  });
});
