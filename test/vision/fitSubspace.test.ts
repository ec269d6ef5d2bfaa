import { describe, expect, it } from 'vitest';
import { PCA } from 'ml-pca';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { setKernelsEnabled } from '../../src/vision/learningKernels.ts';
import { symmetricEigen } from '../../src/vision/symmetricEigen.ts';
import { mulberry } from '../helpers/random.ts';

/** Column j of a pixel-major basis. */
function column(basis: Float32Array, d: number, k: number, j: number): Float64Array {
  const c = new Float64Array(d);
  for (let i = 0; i < d; i++) c[i] = basis[i * k + j];
  return c;
}

/** Cosines of the principal angles between two k-dimensional subspaces (singular values of AᵀB). */
function principalCosines(a: Float64Array[], b: Float64Array[]): Float64Array {
  const k = a.length;
  const m = new Float64Array(k * k);
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      let s = 0;
      for (let p = 0; p < a[i].length; p++) s += a[i][p] * b[j][p];
      m[i * k + j] = s;
    }
  }
  // Singular values of M are the square roots of the eigenvalues of MᵀM.
  const mtm = new Float64Array(k * k);
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      let s = 0;
      for (let p = 0; p < k; p++) s += m[p * k + i] * m[p * k + j];
      mtm[i * k + j] = s;
    }
  }
  return symmetricEigen(mtm, k).values.map((v) => Math.sqrt(Math.max(v, 0)));
}

/**
 * Sines of the principal angles between the column spaces of two d × k pixel-major bases: the
 * singular values of (I − QQᵀ)B, Q an orthonormal basis of A (accurate for small angles, where
 * cosines near 1 are not).
 */
function principalSines(a: Float32Array, b: Float32Array, d: number, k: number): Float64Array {
  const q = Array.from({ length: k }, (_, j) => column(a, d, k, j));
  for (let j = 0; j < k; j++) {
    for (let p = 0; p < j; p++) {
      const dot = q[j].reduce((s, v, i) => s + v * q[p][i], 0);
      for (let i = 0; i < d; i++) q[j][i] -= dot * q[p][i];
    }
    const norm = Math.hypot(...q[j]);
    for (let i = 0; i < d; i++) q[j][i] /= norm;
  }
  const r = Array.from({ length: k }, (_, j) => {
    const v = column(b, d, k, j);
    for (const u of q) {
      const dot = u.reduce((s, x, i) => s + x * v[i], 0);
      for (let i = 0; i < d; i++) v[i] -= dot * u[i];
    }
    return v;
  });
  const rtr = new Float64Array(k * k);
  for (let i = 0; i < k; i++) for (let j = 0; j < k; j++) rtr[i * k + j] = r[i].reduce((s, x, p) => s + x * r[j][p], 0);
  return symmetricEigen(rtr, k).values.map((v) => Math.sqrt(Math.max(v, 0)));
}

describe('fitSubspace', () => {
  it('reproduces the published two-variable worked example', () => {
    // check: L. I. Smith, "A tutorial on Principal Components Analysis" (2002), §3: data set,
    // covariance eigenvalues and unit eigenvectors (values recalled from memory).
    const x = [2.5, 0.5, 2.2, 1.9, 3.1, 2.3, 2, 1, 1.5, 1.1];
    const y = [2.4, 0.7, 2.9, 2.2, 3.0, 2.7, 1.6, 1.1, 1.6, 0.9];
    const frames = x.map((xi, i) => Float32Array.of(xi, y[i]));
    const model = fitSubspace(frames, { width: 2, height: 1 }, { components: 2 });
    expect(model.eigenvalues[0]).toBeCloseTo(1.28402771, 5);
    expect(model.eigenvalues[1]).toBeCloseTo(0.0490833989, 5);
    const first = column(model.basis, 2, 2, 0);
    const second = column(model.basis, 2, 2, 1);
    // Eigenvectors are defined up to sign.
    const s1 = Math.sign(first[0]) * Math.sign(-0.677873399);
    expect(first[0] * s1).toBeCloseTo(-0.677873399, 5);
    expect(first[1] * s1).toBeCloseTo(-0.735178656, 5);
    const s2 = Math.sign(second[0]) * Math.sign(-0.735178656);
    expect(second[0] * s2).toBeCloseTo(-0.735178656, 5);
    expect(second[1] * s2).toBeCloseTo(0.677873399, 5);
    expect(model.mean[0]).toBeCloseTo(1.81, 5);
    expect(model.mean[1]).toBeCloseTo(1.91, 5);
    expect(model.totalVariance).toBeCloseTo(0.616555556 + 0.716555556, 5);
    expect(model.retainedVariance).toBeCloseTo(1, 6);
  });

  it('agrees with an SVD of the data matrix on random data (ml-pca)', () => {
    const rand = mulberry(7);
    const n = 40;
    const d = 60;
    // Low-rank structure plus noise, so the leading subspace is well defined.
    const factors = Array.from({ length: 4 }, () => Float64Array.from({ length: d }, () => rand() * 2 - 1));
    const rows: number[][] = [];
    for (let t = 0; t < n; t++) {
      const w = [5, 3, 2, 1].map((s) => s * (rand() * 2 - 1));
      rows.push(Array.from({ length: d }, (_, i) => 100 + factors.reduce((s, f, q) => s + w[q] * f[i], 0) + 0.05 * (rand() - 0.5)));
    }
    const frames = rows.map((r) => Float32Array.from(r));
    const model = fitSubspace(frames, { width: d, height: 1 }, { variance: 0.99 });
    // check: ml-pca (PCA by SVD of the centred data matrix, an independent route to the same subspace)
    const pca = new PCA(rows, { method: 'SVD' });
    const cumulative = pca.getCumulativeVariance();
    const k = model.components;
    expect(k).toBe(cumulative.findIndex((c) => c >= 0.99) + 1);
    expect(model.retainedVariance).toBeCloseTo(cumulative[k - 1], 4);
    const theirs = pca.getEigenvalues().slice(0, k);
    theirs.forEach((v, j) => expect(model.eigenvalues[j] / v).toBeCloseTo(1, 3));
    const vectors = pca.getEigenvectors();
    const ours = Array.from({ length: k }, (_, j) => column(model.basis, d, k, j));
    const ref = Array.from({ length: k }, (_, j) => Float64Array.from(vectors.getColumn(j)));
    for (const c of principalCosines(ours, ref)) expect(c).toBeCloseTo(1, 4);
  });

  it('keeps orthonormal eigen-images and a noise level near the sensor noise', () => {
    const rand = mulberry(11);
    const width = 24;
    const height = 16;
    const d = width * height;
    const sigma = 3;
    const frames: Float32Array[] = [];
    for (let t = 0; t < 60; t++) {
      const gain = 1 + 0.2 * Math.sin(t / 5);
      const f = new Float32Array(d);
      for (let i = 0; i < d; i++) f[i] = 80 * gain + (i % width) + gaussian(rand) * sigma;
      frames.push(f);
    }
    const model = fitSubspace(frames, { width, height }, { components: 1, noiseSpread: 0 });
    const u = column(model.basis, d, 1, 0);
    expect(u.reduce((s, v) => s + v * v, 0)).toBeCloseTo(1, 5);
    const meanNoise = model.noise.reduce((s, v) => s + v, 0) / d;
    // The gain change lies in the subspace, so what is left is the sensor noise.
    expect(meanNoise).toBeGreaterThan(sigma * 0.85);
    expect(meanNoise).toBeLessThan(sigma * 1.15);
    // Training residuals underestimate it; spreading takes the neighbourhood's largest level.
    const training = fitSubspace(frames, { width, height }, { components: 1, noiseSpread: 0, noiseEstimate: 'training' });
    expect(training.noise.reduce((s, v) => s + v, 0) / d).toBeLessThan(sigma * 1.15);
    const spread = fitSubspace(frames, { width, height }, { components: 1 });
    for (let i = 0; i < d; i++) expect(spread.noise[i]).toBeGreaterThanOrEqual(model.noise[i]);
    expect(spread.noise.reduce((s, v) => s + v, 0) / d).toBeLessThan(sigma * 1.4);
  });

  it('learns the same model with the WebAssembly kernels as with the JS loops', () => {
    // Our own synthetic reading room at a size whose pixel count is not a multiple of 4, and 75
    // learning frames (not a multiple of 4 either; folds of 35 and 40).
    const size = { width: 67, height: 53 };
    const d = size.width * size.height;
    const scene = createScene('reading-room', size);
    const frames = Array.from({ length: 75 }, (_, i) => scene.emptyFrameAt(i * 40).data);
    const cases = [
      { components: 3 },
      { components: 3, noiseEstimate: 'training' as const, noiseSpread: 0 },
      { variance: 0.999, maxComponents: 2 },
    ];
    try {
      for (const options of cases) {
        setKernelsEnabled(true);
        const kernels = fitSubspace(frames, size, options);
        setKernelsEnabled(false);
        const js = fitSubspace(frames, size, options);
        const label = JSON.stringify(options);
        // check: the JS loops in double precision (themselves checked against ml-pca above)
        expect(kernels.components, label).toBe(js.components);
        expect(kernels.mean, label).toEqual(js.mean);
        const k = js.components;
        kernels.eigenvalues.forEach((v, j) => expect(Math.abs(v / js.eigenvalues[j] - 1), label).toBeLessThan(1e-5));
        for (const sine of principalSines(js.basis, kernels.basis, d, k)) expect(Math.asin(Math.min(1, sine)), label).toBeLessThan(1e-3);
        for (let i = 0; i < d; i++) expect(Math.abs(kernels.noise[i] / js.noise[i] - 1), `${label}, pixel ${i}`).toBeLessThan(1e-4);
        expect(kernels.totalVariance / js.totalVariance - 1, label).toBeCloseTo(0, 5);
      }
    } finally {
      setKernelsEnabled(true);
    }
  });

  it('computes only the kept components (randomized) and agrees with a full eigendecomposition', () => {
    // Our own synthetic reading room, 300 empty frames over its lighting cycle at 64×48: three
    // strong directions (the lighting), then sensor noise, a gap of about 30 in eigenvalue.
    const size = { width: 64, height: 48 };
    const d = size.width * size.height;
    const scene = createScene('reading-room', size);
    const n = 300;
    const frames = Array.from({ length: n }, (_, i) => scene.emptyFrameAt(i * 10).data);
    // check: ml-matrix EigenvalueDecomposition of the full n × n Gram matrix of the centred frames
    // (the dev reference), eigen-images u = X v / √λ, covariance eigenvalues λ / (n − 1).
    const mean = new Float64Array(d);
    for (const f of frames) for (let i = 0; i < d; i++) mean[i] += f[i] / n;
    const x = new Matrix(d, n);
    frames.forEach((f, t) => {
      for (let i = 0; i < d; i++) x.set(i, t, f[i] - mean[i]);
    });
    const evd = new EigenvalueDecomposition(x.transpose().mmul(x), { assumeSymmetric: true });
    const order = evd.realEigenvalues.map((v, i) => [v, i] as const).sort((a, b) => b[0] - a[0]);
    const reference = (k: number) => {
      const basis = new Float32Array(d * k);
      for (let j = 0; j < k; j++) {
        const [value, c] = order[j];
        const u = x.mmul(evd.eigenvectorMatrix.subMatrix(0, n - 1, c, c));
        for (let i = 0; i < d; i++) basis[i * k + j] = u.get(i, 0) / Math.sqrt(value);
      }
      return { basis, eigenvalues: order.slice(0, k).map(([v]) => v / (n - 1)) };
    };
    for (const useKernels of [true, false]) {
      setKernelsEnabled(useKernels);
      try {
        // The kept subspace ahead of the gap (λ₃ / λ₄ ≈ 6.6): three subspace iterations shrink the
        // angle by (λ₄/λ₃)² ≈ 1/44 each (Halko et al. 2011, §4.5); measured 3e-3 rad and 6e-5.
        const three = fitSubspace(frames, size, { components: 3, decomposition: 'randomized' });
        const ref3 = reference(3);
        ref3.eigenvalues.forEach((v, j) => expect(Math.abs(three.eigenvalues[j] / v - 1)).toBeLessThan(2e-4));
        for (const sine of principalSines(ref3.basis, three.basis, d, 3)) expect(Math.asin(Math.min(1, sine))).toBeLessThan(5e-3);
        // Twelve components, nine of them in the flat noise floor: there no method short of the
        // full decomposition finds the same noise directions, but the Ritz values stay below the
        // true eigenvalues (Rayleigh quotients) and near them, and the subspace ahead of the gap
        // is unchanged; the noise map the counter uses is the snapshot fit's within 2 %.
        const twelve = fitSubspace(frames, size, { components: 12, decomposition: 'randomized' });
        const ref12 = reference(12);
        ref12.eigenvalues.forEach((v, j) => {
          expect(twelve.eigenvalues[j]).toBeLessThanOrEqual(v * (1 + 1e-5));
          expect(twelve.eigenvalues[j] / v).toBeGreaterThan(0.75);
        });
        const snapshots = fitSubspace(frames, size, { components: 12, decomposition: 'snapshots' });
        let worst = 0;
        for (let i = 0; i < d; i++) worst = Math.max(worst, Math.abs(twelve.noise[i] / snapshots.noise[i] - 1));
        expect(worst).toBeLessThan(0.02);
        expect(twelve.totalVariance / snapshots.totalVariance - 1).toBeCloseTo(0, 5);
      } finally {
        setKernelsEnabled(true);
      }
    }
  });

  it('chooses k by retained variance, capped, and rejects bad options', () => {
    const rand = mulberry(3);
    const frames = Array.from({ length: 30 }, () => Float32Array.from({ length: 50 }, () => rand() * 255));
    const capped = fitSubspace(frames, { width: 50, height: 1 }, { variance: 0.999, maxComponents: 5 });
    expect(capped.components).toBe(5);
    expect(() => fitSubspace(frames.slice(0, 1), { width: 50, height: 1 })).toThrow(/at least 2 frames/);
    expect(() => fitSubspace(frames.slice(0, 10), { width: 50, height: 1 }, { components: 12 })).toThrow(/components 12 is more than the 9 independent directions/);
    expect(() => fitSubspace(frames, { width: 50, height: 1 }, { components: 25 })).toThrow(/components 25 is more than the 24 the counter takes/);
    expect(() => fitSubspace(frames, { width: 50, height: 1 }, { maxComponents: 25 })).toThrow(/maxComponents must be a whole number from 0 to 24/);
    expect(() => fitSubspace(frames, { width: 50, height: 1 }, { variance: 1.5 })).toThrow(/variance/);
    expect(() => fitSubspace(frames, { width: 49, height: 1 })).toThrow(/pixels/);
  });
});

function gaussian(rand: () => number): number {
  const u = Math.max(rand(), 1e-12);
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rand());
}
