import { Matrix, QrDecomposition } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { rescaleBasis } from '../../src/vision/rescaleBasis.ts';
import { mulberry } from '../helpers/random.ts';

describe('rescaleBasis', () => {
  it('scales a component by μ/μ₀ per pixel and normalises it', () => {
    // check: hand-computed, (½, ½, ½, ½) · diag(2, 1, 1, 1) = (1, ½, ½, ½), of length √7 / 2.
    const learned = { width: 4, height: 1, components: 1, mean: Float32Array.of(100, 100, 100, 100), basis: Float32Array.of(0.5, 0.5, 0.5, 0.5) };
    const basis = rescaleBasis(learned, Float32Array.of(200, 100, 100, 100));
    const expected = [2, 1, 1, 1].map((v) => v / Math.sqrt(7));
    for (let i = 0; i < 4; i++) expect(basis[i]).toBeCloseTo(expected[i], 6);
    expect(Array.from(learned.basis)).toEqual([0.5, 0.5, 0.5, 0.5]);
  });

  it('gives the orthonormal factor of the scaled basis, as a QR decomposition does', () => {
    // check: ml-matrix QrDecomposition (Householder) of S·B₀: the same columns up to their signs.
    const width = 9, height = 7, d = width * height, k = 3;
    const rng = mulberry(11);
    // An orthonormal B₀ from the QR of a random matrix.
    const q0 = new QrDecomposition(new Matrix(Array.from({ length: d }, () => Array.from({ length: k }, () => rng() - 0.5)))).orthogonalMatrix;
    const basis0 = new Float32Array(d * k);
    for (let i = 0; i < d; i++) for (let j = 0; j < k; j++) basis0[i * k + j] = q0.get(i, j);
    const mean0 = Float32Array.from({ length: d }, () => 40 + 150 * rng());
    const mean = Float32Array.from(mean0, (m) => m * (0.7 + 0.8 * rng()));
    const basis = rescaleBasis({ width, height, components: k, mean: mean0, basis: basis0 }, mean);

    const scaled = new Matrix(d, k);
    for (let i = 0; i < d; i++) for (let j = 0; j < k; j++) scaled.set(i, j, basis0[i * k + j] * (mean[i] / mean0[i]));
    const q = new QrDecomposition(scaled).orthogonalMatrix;
    for (let j = 0; j < k; j++) {
      let dot = 0;
      for (let i = 0; i < d; i++) dot += basis[i * k + j] * q.get(i, j);
      const sign = Math.sign(dot);
      for (let i = 0; i < d; i++) expect(basis[i * k + j]).toBeCloseTo(sign * q.get(i, j), 5);
    }
    // Orthonormal columns: BᵀB = I.
    for (let p = 0; p < k; p++) {
      for (let r = 0; r < k; r++) {
        let dot = 0;
        for (let i = 0; i < d; i++) dot += basis[i * k + p] * basis[i * k + r];
        expect(dot).toBeCloseTo(p === r ? 1 : 0, 5);
      }
    }
  });

  it('bounds the factor and floors dark pixels', () => {
    const learned = { width: 3, height: 1, components: 1, mean: Float32Array.of(1, 100, 100), basis: Float32Array.of(0, 0.6, 0.8) };
    // Pixel 0: max(8, 50) / max(8, 1) = 6.25, bounded to 4; pixel 1: 1000 / 100 = 10 → 4; pixel 2: 1.
    const basis = rescaleBasis(learned, Float32Array.of(50, 1000, 100));
    const norm = Math.hypot(0, 0.6 * 4, 0.8);
    expect(basis[0]).toBe(0);
    expect(basis[1]).toBeCloseTo((0.6 * 4) / norm, 6);
    expect(basis[2]).toBeCloseTo(0.8 / norm, 6);
  });

  it('names the argument in its errors', () => {
    const learned = { width: 2, height: 1, components: 1, mean: Float32Array.of(1, 1), basis: Float32Array.of(1, 0) };
    expect(() => rescaleBasis(learned, Float32Array.of(1))).toThrow(/mean and basis must fit 2×1/);
    expect(() => rescaleBasis(learned, Float32Array.of(1, 1), { bounds: [2, 3] })).toThrow(/bounds/);
    expect(() => rescaleBasis(learned, Float32Array.of(1, 1), { out: learned.basis })).toThrow(/learned basis/);
  });
});
