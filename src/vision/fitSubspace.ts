import type { Subspace } from './subspace.ts';
import { symmetricEigen } from './symmetricEigen.ts';

export interface FitSubspaceOptions {
  /** Number of eigen-images to keep; when set, `variance` is ignored. 0 keeps only the mean. */
  components?: number;
  /** Smallest share of the learning frames' variance to retain, in (0, 1]; default 0.95. */
  variance?: number;
  /** Upper bound on the number of components chosen by `variance`; default 12. */
  maxComponents?: number;
  /** Lowest per-pixel noise level, in grey levels (inclusive); default 1.5. */
  noiseFloor?: number;
  /**
   * How the per-pixel noise level is estimated: `'cross-validated'` (default) from frames the
   * subspace was not fitted to, `'training'` from the learning frames' own residuals.
   */
  noiseEstimate?: 'cross-validated' | 'training';
  /**
   * Radius in pixels of the neighbourhood whose largest noise level each pixel takes (0 = none);
   * default 2. A textured edge that sways by a pixel or two (leaves, a curtain) then stays quiet;
   * static texture keeps its low noise level, since the largest of low levels is low.
   */
  noiseSpread?: number;
}

/** Frames per block when splitting the learning frames into two interleaved halves. */
const foldBlock = 8;

/**
 * Learns the empty-scene subspace from frames of an empty scene (eigenbackground:
 * Oliver, Rosario & Pentland 2000).
 *
 * PCA by the method of snapshots (Sirovich 1987; Turk & Pentland 1991): with X the d×n matrix of
 * centred frames, the n×n Gram matrix G = XᵀX has the same non-zero eigenvalues as XXᵀ, and an
 * eigenvector v of G maps to the unit eigen-image u = Xv / √λ. Only an n×n eigenproblem is solved,
 * however many pixels a frame has. Covariance eigenvalues are λ / (n − 1).
 *
 * The per-pixel noise level σ_i is the root mean square residual that the model leaves on frames
 * it was not fitted to: two-fold cross-validation over interleaved blocks of 8 frames (the
 * training residual of a subspace fitted to few frames is far smaller than what it leaves on new
 * frames, and thresholds built on it fire everywhere). Each σ_i then takes the largest level
 * within `noiseSpread` pixels and is floored at `noiseFloor`, so that clipped or flat pixels do
 * not become infinitely sensitive.
 *
 * Example: ten 2-pixel "frames" (x, y) from the classic PCA tutorial data set give eigenvalues
 * 1.284 and 0.049 (see test/vision/fitSubspace.test.ts).
 *
 * @param frames n ≥ 2 pixel vectors of equal length d (e.g. GreyFrame.data).
 * @param size the width and height the vectors were taken at (width × height must equal d).
 */
export function fitSubspace(
  frames: readonly Float32Array[],
  size: { width: number; height: number },
  options: FitSubspaceOptions = {},
): Subspace {
  const {
    components,
    variance = 0.95,
    maxComponents = 12,
    noiseFloor = 1.5,
    noiseEstimate = 'cross-validated',
    noiseSpread = 2,
  } = options;
  const n = frames.length;
  const d = size.width * size.height;
  if (n < 2) throw new RangeError(`need at least 2 frames to learn from, got ${n}`);
  frames.forEach((f, t) => {
    if (f.length !== d) throw new RangeError(`frame ${t} has ${f.length} pixels, expected ${d}`);
  });
  if (components !== undefined && !(Number.isInteger(components) && components >= 0)) {
    throw new RangeError(`components must be a whole number ≥ 0, got ${components}`);
  }
  if (!(variance > 0 && variance <= 1)) throw new RangeError(`variance must be in (0, 1], got ${variance}`);
  if (!(Number.isInteger(maxComponents) && maxComponents >= 0)) {
    throw new RangeError(`maxComponents must be a whole number ≥ 0, got ${maxComponents}`);
  }
  if (!(Number.isInteger(noiseSpread) && noiseSpread >= 0)) {
    throw new RangeError(`noiseSpread must be a whole number ≥ 0, got ${noiseSpread}`);
  }
  const fit = fitCore(frames, d, { components, variance, maxComponents });
  const { mean, basis, k, keptSum, total } = fit;
  let sumSq: Float64Array;
  let divisor: number;
  if (noiseEstimate === 'cross-validated' && n >= 4) {
    // Two-fold cross-validation over interleaved blocks of frames: each half is explained by a
    // subspace fitted to the other half, so the noise level is what the model leaves on frames it
    // has not seen, not the smaller residual of the frames it was fitted to.
    sumSq = new Float64Array(d);
    const folds = [0, 1].map((f) => frames.filter((_, t) => Math.floor(t / foldBlock) % 2 === f));
    if (folds[1].length === 0) {
      folds[0] = frames.filter((_, t) => t % 2 === 0);
      folds[1] = frames.filter((_, t) => t % 2 === 1);
    }
    for (let f = 0; f < 2; f++) {
      const other = folds[1 - f];
      const half = fitCore(other, d, { components: undefined, variance: 1, maxComponents: k });
      addResidualSquares(folds[f], half.mean, half.basis, d, half.k, sumSq);
    }
    divisor = n;
  } else {
    sumSq = new Float64Array(d);
    addResidualSquares(frames, mean, basis, d, k, sumSq);
    // Residual degrees of freedom n − 1 − k, as in least-squares regression.
    divisor = Math.max(1, n - 1 - k);
  }
  const noise = spreadMax(sumSq, divisor, noiseFloor, size, noiseSpread);
  const retainedVariance = total > 0 ? keptSum / total : 1;
  const residualVariance = d > k ? (total - keptSum) / (n - 1) / (d - k) : 0;
  return {
    width: size.width,
    height: size.height,
    components: k,
    mean,
    basis,
    eigenvalues: fit.eigenvalues,
    totalVariance: total / (n - 1),
    retainedVariance,
    residualVariance: Math.max(residualVariance, 0),
    noise,
    frameCount: n,
  };
}

interface CoreFit {
  mean: Float32Array;
  basis: Float32Array;
  eigenvalues: Float64Array;
  k: number;
  /** Sum of the kept Gram eigenvalues and of all of them (the trace), grey levels². */
  keptSum: number;
  total: number;
}

/** The largest number of independent directions n centred frames of d pixels can have. */
function rankOf(n: number, d: number): number {
  return Math.max(0, Math.min(n - 1, d));
}

/** Mean, Gram eigen-decomposition and eigen-images by the method of snapshots. */
function fitCore(
  frames: readonly Float32Array[],
  d: number,
  choice: { components: number | undefined; variance: number; maxComponents: number },
): CoreFit {
  const n = frames.length;

  const mean = meanOf(frames, d);
  const centred = frames.map((f) => {
    const c = new Float32Array(d);
    for (let i = 0; i < d; i++) c[i] = f[i] - mean[i];
    return c;
  });
  const gram = gramMatrix(centred, d);
  const { values, vectors } = symmetricEigen(gram, n);

  let total = 0;
  for (let i = 0; i < n; i++) total += gram[i * n + i];
  // Non-zero directions: at most n − 1 (centring removes one) and at most d.
  const tiny = Math.max(values[0], 0) * 1e-10;
  let rank = 0;
  while (rank < rankOf(n, d) && values[rank] > tiny) rank++;

  let k: number;
  const { components, variance, maxComponents } = choice;
  if (components !== undefined) {
    if (components > rank) {
      throw new RangeError(
        `components ${components} is more than the ${rank} independent directions in ${n} learning frames`,
      );
    }
    k = components;
  } else {
    k = 0;
    let kept = 0;
    while (k < rank && k < maxComponents && (total <= 0 || kept / total < variance)) kept += values[k++];
  }

  const eigenvalues = new Float64Array(k);
  const basis = new Float32Array(d * k);
  const u = new Float64Array(d);
  let keptSum = 0;
  for (let j = 0; j < k; j++) {
    keptSum += values[j];
    eigenvalues[j] = values[j] / (n - 1);
    const s = Math.sqrt(values[j]);
    u.fill(0);
    for (let t = 0; t < n; t++) {
      const w = vectors[j * n + t] / s;
      const c = centred[t];
      for (let i = 0; i < d; i++) u[i] += w * c[i];
    }
    for (let i = 0; i < d; i++) basis[i * k + j] = u[i];
  }
  orthonormaliseColumns(basis, d, k);
  return { mean, basis, eigenvalues, k, keptSum, total };
}

function meanOf(frames: readonly Float32Array[], d: number): Float32Array {
  const sum = new Float64Array(d);
  for (const f of frames) for (let i = 0; i < d; i++) sum[i] += f[i];
  const mean = new Float32Array(d);
  for (let i = 0; i < d; i++) mean[i] = sum[i] / frames.length;
  return mean;
}

/** G = XᵀX over pixel tiles, so that a tile of every frame stays in cache while all pairs use it. */
function gramMatrix(centred: readonly Float32Array[], d: number): Float64Array {
  const n = centred.length;
  const gram = new Float64Array(n * n);
  const tile = 2048;
  for (let p0 = 0; p0 < d; p0 += tile) {
    const p1 = Math.min(d, p0 + tile);
    for (let a = 0; a < n; a++) {
      const xa = centred[a];
      let b = 0;
      // Four dot products at once: xa is read once for four partners.
      for (; b + 3 <= a; b += 4) {
        const x0 = centred[b], x1 = centred[b + 1], x2 = centred[b + 2], x3 = centred[b + 3];
        let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
        for (let p = p0; p < p1; p++) {
          const v = xa[p];
          s0 += v * x0[p];
          s1 += v * x1[p];
          s2 += v * x2[p];
          s3 += v * x3[p];
        }
        gram[a * n + b] += s0;
        gram[a * n + b + 1] += s1;
        gram[a * n + b + 2] += s2;
        gram[a * n + b + 3] += s3;
      }
      for (; b <= a; b++) {
        const xb = centred[b];
        let s = 0;
        for (let p = p0; p < p1; p++) s += xa[p] * xb[p];
        gram[a * n + b] += s;
      }
    }
  }
  for (let a = 0; a < n; a++) for (let b = 0; b < a; b++) gram[b * n + a] = gram[a * n + b];
  return gram;
}

/** Modified Gram–Schmidt on the k pixel-major columns, in double precision. */
function orthonormaliseColumns(basis: Float32Array, d: number, k: number): void {
  for (let j = 0; j < k; j++) {
    for (let q = 0; q < j; q++) {
      let dot = 0;
      for (let i = 0; i < d; i++) dot += basis[i * k + j] * basis[i * k + q];
      for (let i = 0; i < d; i++) basis[i * k + j] -= dot * basis[i * k + q];
    }
    let norm = 0;
    for (let i = 0; i < d; i++) norm += basis[i * k + j] * basis[i * k + j];
    norm = Math.sqrt(norm);
    if (norm > 0) for (let i = 0; i < d; i++) basis[i * k + j] /= norm;
  }
}

/** Adds each frame's squared residual r_i² against (mean, basis) into sumSq. */
function addResidualSquares(
  frames: readonly Float32Array[],
  mean: Float32Array,
  basis: Float32Array,
  d: number,
  k: number,
  sumSq: Float64Array,
): void {
  const c = new Float64Array(d);
  const y = new Float64Array(k);
  for (const f of frames) {
    y.fill(0);
    for (let i = 0; i < d; i++) {
      const v = f[i] - mean[i];
      c[i] = v;
      for (let j = 0; j < k; j++) y[j] += basis[i * k + j] * v;
    }
    for (let i = 0; i < d; i++) {
      let r = c[i];
      for (let j = 0; j < k; j++) r -= basis[i * k + j] * y[j];
      sumSq[i] += r * r;
    }
  }
}

/** σ_i = max(floor, largest √(sumSq / divisor) within `radius` pixels of i). */
function spreadMax(
  sumSq: Float64Array,
  divisor: number,
  floor: number,
  size: { width: number; height: number },
  radius: number,
): Float32Array {
  const { width, height } = size;
  const sigma = new Float32Array(sumSq.length);
  for (let i = 0; i < sumSq.length; i++) sigma[i] = Math.sqrt(sumSq[i] / divisor);
  const rows = new Float32Array(sigma.length);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let m = 0;
      for (let u = Math.max(0, x - radius); u <= Math.min(width - 1, x + radius); u++) m = Math.max(m, sigma[y * width + u]);
      rows[y * width + x] = m;
    }
  }
  const noise = new Float32Array(sigma.length);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let m = floor;
      for (let v = Math.max(0, y - radius); v <= Math.min(height - 1, y + radius); v++) m = Math.max(m, rows[v * width + x]);
      noise[y * width + x] = m;
    }
  }
  return noise;
}
