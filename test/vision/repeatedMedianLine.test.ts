import { describe, expect, it } from 'vitest';
import { repeatedMedianLine } from '../../src/vision/repeatedMedianLine.ts';

describe('repeatedMedianLine', () => {
  it('ignores one far point that carries a least-squares line away', () => {
    // Hand-computed: every point's median slope is 1 (point 4's is the median of 40, 19.5, 12.67, 9 → 16.08,
    // which the median over the five points leaves out), and the intercepts yᵢ − xᵢ are 0, 0, 0, 0, 36.
    expect(repeatedMedianLine({ x: [0, 1, 2, 3, 4], y: [0, 1, 2, 3, 40] })).toEqual({ intercept: 0, slope: 1 });
  });

  it('matches scipy.stats.siegelslopes on points with outliers and a repeated x', () => {
    const x = [0.42, 0.47, 0.51, 0.55, 0.55, 0.6, 0.64, 0.7, 0.73, 0.81, 0.88, 0.93];
    const y = [0.031, 0.035, 0.04, 0.043, 0.061, 0.047, 0.052, 0.056, 0.081, 0.065, 0.071, 0.074];
    const line = repeatedMedianLine({ x, y })!;
    // check: scipy 1.17.1 scipy.stats.siegelslopes(y, x) (method "hierarchical"), values printed by it once
    expect(line.slope).toBeCloseTo(0.0849624060150376, 12);
    expect(line.intercept).toBeCloseTo(-0.0037481203007518928, 12);
  });

  it('fits an even stride of the points when told to use fewer, and has no line without two different x', () => {
    const x = Array.from({ length: 100 }, (_, i) => i / 100);
    const y = x.map((v) => 2 + 3 * v);
    const line = repeatedMedianLine({ x, y }, { maxPoints: 10 })!;
    expect(line.slope).toBeCloseTo(3, 12);
    expect(line.intercept).toBeCloseTo(2, 12);
    expect(repeatedMedianLine({ x: [0.5, 0.5, 0.5], y: [1, 2, 3] })).toBeUndefined();
    expect(() => repeatedMedianLine({ x: [0, 1], y: [0] })).toThrow(/points\.x has 2 values but points\.y has 1/);
    expect(() => repeatedMedianLine({ x: [0, 1], y: [0, NaN] })).toThrow(/points\[1\] must be finite/);
    expect(() => repeatedMedianLine({ x: [0, 1], y: [0, 1] }, { maxPoints: 1 })).toThrow(/maxPoints/);
  });
});
