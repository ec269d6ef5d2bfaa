import { describe, expect, it } from 'vitest';
import { rateLimit } from '../../src/server/rateLimit.ts';

// A sliding window on a manual clock (hand-worked times; the rule is ours).
describe('rateLimit', () => {
  it('allows max starts per window and says how long to wait', () => {
    let now = 1000;
    const limit = rateLimit({ max: 2, windowMs: 1000, clock: () => now });
    expect(limit.take('a')).toBe(0);
    now = 1400;
    expect(limit.take('a')).toBe(0);
    expect(limit.take('b')).toBe(0);
    now = 1500;
    expect(limit.take('a')).toBe(500); // the start at 1000 leaves the window at 2000
    now = 2000;
    expect(limit.take('a')).toBe(0);
    expect(limit.take('a')).toBe(400); // 1400 + 1000 − 2000
  });

  it('keeps the least gap between starts', () => {
    let now = 0;
    const limit = rateLimit({ max: 10, windowMs: 3_600_000, minGapMs: 60_000, clock: () => now });
    expect(limit.take('door')).toBe(0);
    now = 15_000;
    expect(limit.take('door')).toBe(45_000);
    now = 60_000;
    expect(limit.take('door')).toBe(0);
    for (let i = 2; i <= 9; i++) {
      now = i * 60_000;
      expect(limit.take('door')).toBe(0);
    }
    now = 10 * 60_000;
    // Ten starts in the hour (at 0, 1, …, 9 minutes): the next is possible an hour after the first.
    expect(limit.take('door')).toBe(3_600_000 - 10 * 60_000);
  });
});
