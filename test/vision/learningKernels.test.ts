import { readFileSync } from 'node:fs';
import { Matrix, SVD } from 'ml-matrix';
import { afterEach, describe, expect, it } from 'vitest';
import { buildKernelModule } from '../../scripts/buildKernels.ts';
import { learningKernels, setKernelsEnabled } from '../../src/vision/learningKernels.ts';
import { mulberry } from '../helpers/random.ts';

/**
 * Sizes (frames n, pixels d) that are not multiples of the kernels' block of 4; 75 frames span
 * three tiles of 32 frames (the last one partial), 1023 and 3001 pixels several tiles of 256.
 */
const sizes = [[1, 1], [3, 5], [7, 1023], [13, 3001], [75, 37]] as const;

function randomFrames(rand: () => number, n: number, d: number): Float32Array[] {
  return Array.from({ length: n }, () => Float32Array.from({ length: d }, () => 60 + (rand() - 0.5) * 200));
}

/** The frames centred on their mean, in double precision: n × d. */
function centredReference(frames: Float32Array[]): Matrix {
  const x = new Matrix(frames.map((f) => Array.from(f)));
  const mean = x.mean('column');
  return x.subRowVector(mean);
}

describe('learningKernels', () => {
  afterEach(() => setKernelsEnabled(true));

  it('is the committed build of src/vision/kernels/wat/learning/*.wat (scripts/buildKernels.ts)', async () => {
    const committed = new Uint8Array(readFileSync(new URL('../../src/vision/kernels/learning.wasm', import.meta.url)));
    expect(Buffer.from(await buildKernelModule('learning')).equals(Buffer.from(committed))).toBe(true);
  });

  it('centres the frames and forms XᵀX as double precision does', () => {
    const rand = mulberry(21);
    for (const [n, d] of sizes) {
      const frames = randomFrames(rand, n, d);
      const before = frames.map((f) => Float32Array.from(f));
      const kernels = learningKernels(frames, d);
      expect(kernels).toBeDefined();
      // check: ml-matrix column means and mmul in double precision (an independent route)
      const x = new Matrix(frames.map((f) => Array.from(f)));
      const mean = x.mean('column');
      for (let i = 0; i < d; i++) expect(Math.abs(kernels!.mean[i] - mean[i])).toBeLessThanOrEqual(1e-7 * Math.abs(mean[i]) + 1e-12);
      const xc = centredReference(frames);
      const reference = xc.mmul(xc.transpose());
      const gram = kernels!.gram();
      for (let a = 0; a < n; a++) {
        for (let b = 0; b < n; b++) {
          const scale = Math.sqrt(reference.get(a, a) * reference.get(b, b)) + 1e-9;
          expect(Math.abs(gram[a * n + b] - reference.get(a, b)) / scale, `n ${n}, d ${d}, (${a}, ${b})`).toBeLessThan(2e-6);
        }
      }
      // The frames given are not changed.
      frames.forEach((f, t) => expect(f).toEqual(before[t]));
    }
  });

  it('forms weighted sums of a subset of the frames as double precision does', () => {
    const rand = mulberry(5);
    for (const [n, d] of sizes) {
      const frames = randomFrames(rand, n, d);
      const kernels = learningKernels(frames, d, { maxRows: 6 })!;
      const subset = Array.from({ length: n }, (_, t) => t).filter((t) => t % 3 !== 1);
      const m = subset.length;
      for (const rows of [1, 5]) {
        const weights = Float64Array.from({ length: rows * m }, () => rand() * 2 - 1);
        const sums = kernels.combine(subset, weights, rows);
        // check: ml-matrix mmul W · X_subset in double precision; errors bounded by |W| · |X|
        const w = new Matrix(rows, m);
        for (let j = 0; j < rows; j++) for (let t = 0; t < m; t++) w.set(j, t, weights[j * m + t]);
        const xs = centredReference(frames).selection(subset, Array.from({ length: d }, (_, i) => i));
        const reference = w.mmul(xs);
        const bound = Matrix.abs(w).mmul(Matrix.abs(xs));
        expect(sums).toHaveLength(rows);
        for (let j = 0; j < rows; j++) {
          expect(sums[j]).toHaveLength(d);
          for (let i = 0; i < d; i++) {
            expect(Math.abs(sums[j][i] - reference.get(j, i)), `n ${n}, d ${d}, (${j}, ${i})`).toBeLessThanOrEqual(2e-6 * bound.get(j, i) + 1e-9);
          }
        }
      }
    }
  });

  it('projects a subset of the centred frames onto given columns as double precision does (the project kernel)', () => {
    const rand = mulberry(13);
    for (const [n, d] of sizes) {
      const frames = randomFrames(rand, n, d);
      const kernels = learningKernels(frames, d, { maxRows: 6 })!;
      // Repeated and unordered frames, 1..6 columns (not multiples of the kernel's block of 4).
      const subset = Array.from({ length: n + 2 }, (_, t) => (t * 5) % n);
      for (const kk of [1, 3, 6]) {
        const columns = Array.from({ length: kk }, () => Float64Array.from({ length: d }, () => rand() * 2 - 1));
        const y = kernels.project(subset, columns);
        // check: ml-matrix mmul X_subset · U in double precision, the product fitSubspace's JS
        // path (centredFrames.project) forms; errors bounded by |X_subset| · |U| (f32 products
        // summed in f32 lanes over tiles of 256 pixels, tiles added in f64)
        const xs = centredReference(frames).selection(subset, Array.from({ length: d }, (_, i) => i));
        const u = new Matrix(d, kk);
        for (let j = 0; j < kk; j++) for (let i = 0; i < d; i++) u.set(i, j, columns[j][i]);
        const reference = xs.mmul(u);
        const bound = Matrix.abs(xs).mmul(Matrix.abs(u));
        expect(y).toHaveLength(subset.length * kk);
        for (let t = 0; t < subset.length; t++) {
          for (let j = 0; j < kk; j++) {
            expect(Math.abs(y[t * kk + j] - reference.get(t, j)), `n ${n}, d ${d}, k ${kk}, (${t}, ${j})`).toBeLessThanOrEqual(2e-6 * bound.get(t, j) + 1e-9);
          }
        }
      }
    }
  });

  it('adds the residual squares against an offset and an orthonormal basis as double precision does', () => {
    const rand = mulberry(9);
    for (const [n, d, k] of [[3, 5, 2], [7, 1023, 5], [13, 3001, 6], [11, 997, 0], [75, 37, 3]] as const) {
      // Frames near a k-dimensional subspace, so that the residual is far smaller than the frames
      // (the case where f32 cancellation could show).
      // check: ml-matrix SVD for an orthonormal basis (left singular vectors of a random d × k matrix)
      const basisD = k > 0 ? new SVD(Matrix.rand(d, k, { random: rand }), { autoTranspose: true }).leftSingularVectors : new Matrix(d, 0);
      const basis = new Float32Array(d * k);
      for (let i = 0; i < d; i++) for (let j = 0; j < k; j++) basis[i * k + j] = basisD.get(i, j);
      const frames = Array.from({ length: n }, () => {
        const z = Array.from({ length: k }, () => (rand() - 0.5) * 4000);
        return Float32Array.from({ length: d }, (_, i) => 100 + z.reduce((s, zj, j) => s + zj * basis[i * k + j], 0) + (rand() - 0.5) * 4);
      });
      const kernels = learningKernels(frames, d, { maxRows: 6 })!;
      const subset = Array.from({ length: n }, (_, t) => t).filter((t) => t % 2 === 0);
      const offset = Float32Array.from({ length: d }, () => (rand() - 0.5) * 2);
      const start = Float64Array.from({ length: d }, () => rand());
      const sumSq = Float64Array.from(start);
      kernels.addResidualSquares(subset, offset, basis, k, sumSq);
      // check: ml-matrix products in double precision, R = C − C B Bᵀ with C = X_subset − offset
      // (the same f32 basis values), sumSq_i = start_i + Σ_t R_ti²
      const b = new Matrix(d, k);
      for (let i = 0; i < d; i++) for (let j = 0; j < k; j++) b.set(i, j, basis[i * k + j]);
      const c = centredReference(frames)
        .selection(subset, Array.from({ length: d }, (_, i) => i))
        .subRowVector(Array.from(offset));
      const r = k > 0 ? c.clone().sub(c.mmul(b).mmul(b.transpose())) : c;
      const reference = Matrix.mul(r, r).sum('column');
      for (let i = 0; i < d; i++) {
        const ref = start[i] + reference[i];
        expect(Math.abs(sumSq[i] - ref) / ref, `n ${n}, d ${d}, k ${k}, pixel ${i}`).toBeLessThan(1e-4);
      }
    }
  });

  it('reuses its memory across sessions of different sizes, and an old session refuses to run', () => {
    const big = Array.from({ length: 9 }, (_, t) => new Float32Array(5000).fill(t + 1));
    const first = learningKernels(big, 5000)!;
    // Centred on the mean 5: frame t holds t − 4 everywhere.
    expect(first.gram()[8 * 9 + 8]).toBe(16 * 5000);
    const small = learningKernels([Float32Array.of(1, 2, 3), Float32Array.of(3, 6, 9)], 3)!;
    expect(Array.from(small.mean)).toEqual([2, 4, 6]);
    expect(Array.from(small.gram())).toEqual([14, -14, -14, 14]);
    expect(() => first.gram()).toThrow(/replaced/);
    expect(learningKernels(big, 5000)!.gram()[1 * 9 + 2]).toBe(-3 * -2 * 5000);
  });

  it('checks its arguments and can be turned off', () => {
    const frames = [Float32Array.of(1, 2), Float32Array.of(3, 6)];
    expect(() => learningKernels(frames, 3)).toThrow(/frame 0 has 2 pixels/);
    const kernels = learningKernels(frames, 2, { maxRows: 1 })!;
    expect(() => kernels.combine([0, 1], new Float64Array(4), 2)).toThrow(/maxRows/);
    expect(() => kernels.combine([0, 2], new Float64Array(2), 1)).toThrow(/subset entry 1/);
    setKernelsEnabled(false);
    expect(learningKernels(frames, 2)).toBeUndefined();
  });
});
