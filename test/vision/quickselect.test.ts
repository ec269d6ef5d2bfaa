import { describe, expect, it } from 'vitest';
import { quickselect } from '../../src/vision/quickselect.ts';
import { mulberry } from '../helpers/random.ts';

describe('quickselect', () => {
  it('finds the value of a rank in a tiny array', () => {
    // Worked by hand: sorted 1 2 3 4 5.
    const values = Float32Array.of(5, 1, 4, 2, 3);
    expect([0, 1, 2, 3, 4].map((rank) => quickselect(values, rank))).toEqual([1, 2, 3, 4, 5]);
    expect(Array.from(values)).toEqual([5, 1, 4, 2, 3]);
  });

  it('agrees with a full sort on random, tied, sorted, reversed and NaN-holding arrays', () => {
    // check: ECMAScript %TypedArray%.prototype.sort (numeric order, NaN after every number),
    // the reference the selection replaces.
    const rand = mulberry(21);
    const kinds: Record<string, (i: number, n: number) => number> = {
      random: () => rand() * 100,
      ties: () => Math.floor(rand() * 4),
      sorted: (i) => i,
      reversed: (i, n) => n - i,
      constant: () => 7,
      mostlyZero: () => (rand() < 0.9 ? 0 : rand()),
      withNaN: () => (rand() < 0.2 ? NaN : rand()),
    };
    for (const n of [1, 2, 3, 10, 601, 602, 2000, 10972]) {
      for (const [kind, make] of Object.entries(kinds)) {
        const values = Float32Array.from({ length: n }, (_, i) => make(i, n));
        const sorted = Float32Array.from(values).sort();
        for (const rank of new Set([0, n >> 1, Math.max(0, (n >> 1) - 1), n - 1, Math.floor(rand() * n)])) {
          expect(Object.is(quickselect(values, rank), sorted[rank]), `${kind} n=${n} rank=${rank}`).toBe(true);
        }
      }
    }
  });

  it('selects in place when the scratch is the input, leaving it partitioned around the rank', () => {
    const rand = mulberry(5);
    const values = Float32Array.from({ length: 5000 }, () => rand());
    const rank = 1234;
    const value = quickselect(values, rank, { scratch: values });
    expect(values[rank]).toBe(value);
    for (let i = 0; i < rank; i++) expect(values[i] <= value).toBe(true);
    for (let i = rank + 1; i < values.length; i++) expect(values[i] >= value).toBe(true);
  });

  it('uses a longer scratch without touching the input, and checks its arguments', () => {
    const values = Float32Array.of(3, 1, 2);
    const scratch = new Float32Array(10).fill(-1);
    expect(quickselect(values, 2, { scratch })).toBe(3);
    expect(Array.from(values)).toEqual([3, 1, 2]);
    expect(() => quickselect(values, 3)).toThrow(/rank/);
    expect(() => quickselect(values, 0.5)).toThrow(/rank/);
    expect(() => quickselect(new Float32Array(0), 0)).toThrow(/rank/);
    expect(() => quickselect(values, 0, { scratch: new Float32Array(2) })).toThrow(/scratch/);
  });
});
