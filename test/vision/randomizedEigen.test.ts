import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix, QrDecomposition } from 'ml-matrix';
import { randomizedEigen } from '../../src/vision/randomizedEigen.ts';
import { mulberry } from '../helpers/random.ts';

/** A·Z for a dense symmetric A (n × n row-major) and a block Z (l × n, vector-major). */
function multiplyBy(a: Float64Array, n: number) {
  return (z: Float64Array, l: number) => {
    const out = new Float64Array(l * n);
    for (let j = 0; j < l; j++) {
      for (let r = 0; r < n; r++) {
        let s = 0;
        for (let c = 0; c < n; c++) s += a[r * n + c] * z[j * n + c];
        out[j * n + r] = s;
      }
    }
    return out;
  };
}

describe('randomizedEigen', () => {
  it('finds the doc example: diag(5, 3, 1, 0) with a block of 2', () => {
    const a = new Float64Array(16);
    [5, 3, 1, 0].forEach((v, i) => (a[i * 4 + i] = v));
    const { values, vectors } = randomizedEigen(multiplyBy(a, 4), 4, { block: 2, iterations: 12 });
    // check: the eigenvalues of a diagonal matrix are its diagonal (definition)
    expect(values[0]).toBeCloseTo(5, 6);
    expect(values[1]).toBeCloseTo(3, 6);
    expect(Math.abs(vectors[0])).toBeCloseTo(1, 6);
    expect(Math.abs(vectors[4 + 1])).toBeCloseTo(1, 6);
  });

  it('agrees with ml-matrix on the leading eigenpairs of a matrix with a decaying spectrum', () => {
    const rand = mulberry(5);
    const n = 120;
    // A = Q diag(λ) Qᵀ, Q orthogonal (QR of a random matrix), λ_i = 100 · 0.7^i: a spectrum that
    // decays as a scene's does, with a gap after the leading few.
    const q = new QrDecomposition(Matrix.rand(n, n, { random: rand })).orthogonalMatrix;
    const lambda = Array.from({ length: n }, (_, i) => 100 * 0.7 ** i);
    const a = q.mmul(Matrix.diag(lambda)).mmul(q.transpose());
    const dense = Float64Array.from(a.to1DArray());
    const ours = randomizedEigen(multiplyBy(dense, n), n, { block: 15, iterations: 2, seed: 3 });
    // check: ml-matrix EigenvalueDecomposition (tred2/tql2), the dev reference
    const evd = new EigenvalueDecomposition(a, { assumeSymmetric: true });
    const order = evd.realEigenvalues.map((v, i) => [v, i] as const).sort((x, y) => y[0] - x[0]);
    for (let j = 0; j < 5; j++) {
      const [value, column] = order[j];
      expect(Math.abs(ours.values[j] / value - 1)).toBeLessThan(1e-6);
      // Ritz values are Rayleigh quotients: never above the true eigenvalue (Cauchy interlacing).
      expect(ours.values[j]).toBeLessThanOrEqual(value * (1 + 1e-12));
      let dot = 0;
      for (let p = 0; p < n; p++) dot += ours.vectors[j * n + p] * evd.eigenvectorMatrix.get(p, column);
      expect(Math.abs(dot)).toBeGreaterThan(1 - 1e-6);
    }
  });

  it('centres when asked, and checks its arguments', () => {
    const n = 6;
    // A = 1 1ᵀ + diag(1, 2, …): centring removes the all-ones direction.
    const a = new Float64Array(n * n).fill(1);
    for (let i = 0; i < n; i++) a[i * n + i] += i + 1;
    const { vectors } = randomizedEigen(multiplyBy(a, n), n, { block: 3, iterations: 8, centre: true });
    for (let j = 0; j < 3; j++) {
      const sum = vectors.subarray(j * n, j * n + n).reduce((s, v) => s + v, 0);
      expect(Math.abs(sum)).toBeLessThan(1e-9);
    }
    expect(() => randomizedEigen(multiplyBy(a, n), n, { block: 7 })).toThrow(/block/);
    expect(() => randomizedEigen(multiplyBy(a, n), n, { block: 2, iterations: -1 })).toThrow(/iterations/);
    expect(() => randomizedEigen(() => new Float64Array(1), n, { block: 2 })).toThrow(/multiply returned/);
  });
});
