import { Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { solveSymmetric } from '../../src/vision/solveSymmetric.ts';

describe('solveSymmetric', () => {
  it('solves a symmetric positive definite system from its lower triangle', () => {
    const a = [
      [4, 1, 2],
      [1, 5, 3],
      [2, 3, 6],
    ];
    const b = [1, -2, 3];
    const lower = Float64Array.from(a.flatMap((row, i) => row.map((v, j) => (j <= i ? v : Number.NaN))));
    const x = new Float64Array(3);
    expect(solveSymmetric(lower, Float64Array.from(b), 3, x)).toBe(true);
    // check: ml-matrix solve (LU) of the full system
    const reference = solve(new Matrix(a), Matrix.columnVector(b));
    for (let i = 0; i < 3; i++) expect(x[i]).toBeCloseTo(reference.get(i, 0), 12);
  });

  it('refuses a matrix that is not positive definite and leaves x alone', () => {
    const x = Float64Array.of(7, 7);
    expect(solveSymmetric(Float64Array.of(1, 0, 2, 1), Float64Array.of(1, 1), 2, x)).toBe(false);
    expect(Array.from(x)).toEqual([7, 7]);
  });
});
