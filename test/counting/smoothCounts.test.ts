import { describe, expect, it } from 'vitest';
import { slidingWindow } from '../../src/counting/smoothCounts.ts';

describe('slidingWindow', () => {
  it('gives the running median and mean of the last values', () => {
    // check: running median of 3 (Tukey 1977, "3R"-style smoothing; hand-computed)
    const median = slidingWindow(3, 'median');
    expect([2, 2, 5, 2, 7, 7].map((v) => median.push(v))).toEqual([2, 2, 2, 2, 5, 7]);
    const mean = slidingWindow(3, 'mean');
    expect([3, 6, 9, 12].map((v) => mean.push(v))).toEqual([3, 4.5, 6, 9]);
    const even = slidingWindow(4, 'median');
    expect([1, 5, 3, 8].map((v) => even.push(v))).toEqual([1, 3, 3, 4]);
  });

  it('forgets everything on reset and rejects bad windows', () => {
    const w = slidingWindow(2, 'median');
    w.push(10);
    w.reset();
    expect(w.push(1)).toBe(1);
    expect(() => slidingWindow(0, 'mean')).toThrow(/window/);
  });
});
