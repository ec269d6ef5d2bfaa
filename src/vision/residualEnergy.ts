import type { GreyFrame } from '../frames/frame.ts';
import { chiSquare1Median } from './frameNoiseScale.ts';
import type { Subspace } from './subspace.ts';

/** Per-pixel residual energy of a frame and the per-frame distances of probabilistic PCA. */
export interface ResidualEnergy {
  /** e_i = r_i², grey levels², row-major like the frame. */
  readonly energy: Float32Array;
  /** Coordinates y of the frame in the subspace (length k); with robust projection, of its background. */
  readonly coefficients: Float64Array;
  /** Distance from feature space ‖r‖² = Σ e_i (grey levels²). */
  readonly dffs: number;
  /** Distance in feature space Σ y_j² / λ_j: the Mahalanobis term inside the subspace. */
  readonly difs: number;
  /** Mean of e_i / σ_i² over the frame: about 1 for an empty scene the model explains. */
  readonly normalisedEnergy: number;
  /** Share of the pixels left out of the last robust projection step (0 without robust steps). */
  readonly outlierShare: number;
}

export interface ResidualEnergyOptions {
  /** Buffer for `energy` (length width × height), reused instead of allocating. */
  out?: Float32Array;
  /** Buffer for `coefficients` (length k), reused instead of allocating. */
  outCoefficients?: Float64Array;
  /** Precomputed 1 / σ_i² (length width × height), to save the division per pixel. */
  inverseNoiseVariance?: Float32Array;
  /**
   * Robust projection steps after the plain one (0 = plain least squares); default 3. Each step
   * leaves out the pixels the current fit cannot explain and solves again.
   */
  robustSteps?: number;
  /** Pixels whose |r / σ| exceeds this many noise units (times the frame's noise scale) are left out; default 3. */
  robustCutoff?: number;
}

/** Pixels sampled for the robust noise scale: every 7th. */
const scaleStride = 7;

/**
 * Residual of a frame after projecting it onto the empty-scene subspace:
 * r = (z − μ) − B·y with y = Bᵀ(z − μ), and per pixel e_i = r_i².
 *
 * This is the "distance from feature space" of Moghaddam & Pentland (1997, §2): what the
 * eigen-images cannot reconstruct is what is new in the scene. Their "distance in feature space"
 * (the Mahalanobis distance of y under the eigenvalues λ) is returned too, for health checks.
 *
 * Robust projection: a large object pulls the least-squares coordinates y (a bright box raises
 * the "brighter scene" coordinate), and the background's reconstruction drifts everywhere. So y
 * is re-solved on the pixels the fit explains, y = (B_Kᵀ B_K)⁻¹ B_Kᵀ (z − μ)_K over the kept
 * pixels K, as in the robust eigen-image coefficients of Leonardis & Bischof (2000) and Black &
 * Jepson (1998), with hard rejection at `robustCutoff` noise units scaled by the frame's median
 * (r/σ)² (see frameNoiseScale). Since BᵀB = I, B_KᵀB_K = I − B_Oᵀ B_O over the left-out pixels O,
 * so a step costs one pass over the frame plus k² per left-out pixel. Steps stop early once the
 * left-out set is below 0.1 % of the frame or no longer changes in size.
 *
 * Example: with the mean as the only model (k = 0), e_i = (z_i − μ_i)².
 */
export function residualEnergy(
  model: Subspace,
  frame: GreyFrame,
  options: ResidualEnergyOptions = {},
): ResidualEnergy {
  const { out, outCoefficients, inverseNoiseVariance, robustSteps = 3, robustCutoff = 3 } = options;
  const { width, height, components: k, mean, basis, eigenvalues, noise } = model;
  if (frame.width !== width || frame.height !== height) {
    throw new RangeError(`frame is ${frame.width}×${frame.height}, the model is ${width}×${height}`);
  }
  const d = width * height;
  const energy = out ?? new Float32Array(d);
  if (energy.length !== d) throw new RangeError(`out has length ${energy.length}, expected ${d}`);
  const y = outCoefficients ?? new Float64Array(k);
  if (y.length !== k) throw new RangeError(`outCoefficients has length ${y.length}, expected ${k}`);
  const weight = inverseNoiseVariance ?? Float32Array.from(noise, (s) => 1 / (s * s));
  const z = frame.data;

  // y = Bᵀ(z − μ), the pixel-major basis read as one stream; keep Bᵀ(z − μ) for the robust steps.
  y.fill(0);
  for (let i = 0, b = 0; i < d; i++, b += k) {
    const c = z[i] - mean[i];
    for (let j = 0; j < k; j++) y[j] += basis[b + j] * c;
  }
  let outlierShare = 0;
  if (k > 0 && robustSteps > 0) outlierShare = robustProject(model, z, weight, y, robustSteps, robustCutoff, energy);

  // r = (z − μ) − B y.
  let dffs = 0;
  let normalised = 0;
  for (let i = 0, b = 0; i < d; i++, b += k) {
    let r = z[i] - mean[i];
    for (let j = 0; j < k; j++) r -= basis[b + j] * y[j];
    const e = r * r;
    energy[i] = e;
    dffs += e;
    normalised += e * weight[i];
  }
  let difs = 0;
  for (let j = 0; j < k; j++) if (eigenvalues[j] > 0) difs += (y[j] * y[j]) / eigenvalues[j];
  return { energy, coefficients: y, dffs, difs, normalisedEnergy: normalised / d, outlierShare };
}

/** Refines y in place by robust steps; `work` (length d) holds the normalised residuals. Returns the last left-out share. */
function robustProject(
  model: Subspace,
  z: Float32Array,
  weight: Float32Array,
  y: Float64Array,
  steps: number,
  cutoff: number,
  work: Float32Array,
): number {
  const { components: k, mean, basis } = model;
  const d = model.width * model.height;
  const full = Float64Array.from(y); // Bᵀ(z − μ) over all pixels
  const normal = new Float64Array(k * k);
  const rhs = new Float64Array(k);
  const sample = new Float32Array(Math.ceil(d / scaleStride));
  let lastCount = -1;
  let share = 0;
  for (let step = 0; step < steps; step++) {
    for (let i = 0, b = 0; i < d; i++, b += k) {
      let r = z[i] - mean[i];
      for (let j = 0; j < k; j++) r -= basis[b + j] * y[j];
      work[i] = r * r * weight[i];
    }
    for (let i = 0, s = 0; i < d; i += scaleStride, s++) sample[s] = work[i];
    sample.sort();
    const scale = Math.max(1, sample[sample.length >> 1] / chiSquare1Median);
    const limit = cutoff * cutoff * scale;
    normal.fill(0);
    for (let j = 0; j < k; j++) normal[j * k + j] = 1;
    rhs.set(full);
    let count = 0;
    for (let i = 0, b = 0; i < d; i++, b += k) {
      if (work[i] <= limit) continue;
      count++;
      const c = z[i] - mean[i];
      for (let p = 0; p < k; p++) {
        const bp = basis[b + p];
        rhs[p] -= bp * c;
        for (let q = 0; q <= p; q++) normal[p * k + q] -= bp * basis[b + q];
      }
    }
    share = count / d;
    // Nothing worth leaving out, or too little left to trust.
    if (share < 0.001 || share > 0.8) break;
    if (!solveSymmetric(normal, rhs, k, y)) break;
    if (count === lastCount) break;
    lastCount = count;
  }
  return share;
}

/**
 * Solves A x = b for symmetric positive definite A (lower triangle given, row-major k×k) by
 * Cholesky decomposition; writes x and returns true, or returns false when A is not positive
 * definite (then x is untouched).
 */
function solveSymmetric(a: Float64Array, b: Float64Array, k: number, x: Float64Array): boolean {
  const l = new Float64Array(k * k);
  for (let i = 0; i < k; i++) {
    for (let j = 0; j <= i; j++) {
      let s = a[i * k + j];
      for (let p = 0; p < j; p++) s -= l[i * k + p] * l[j * k + p];
      if (i === j) {
        if (!(s > 1e-9)) return false;
        l[i * k + i] = Math.sqrt(s);
      } else {
        l[i * k + j] = s / l[j * k + j];
      }
    }
  }
  const t = new Float64Array(k);
  for (let i = 0; i < k; i++) {
    let s = b[i];
    for (let p = 0; p < i; p++) s -= l[i * k + p] * t[p];
    t[i] = s / l[i * k + i];
  }
  for (let i = k - 1; i >= 0; i--) {
    let s = t[i];
    for (let p = i + 1; p < k; p++) s -= l[p * k + i] * x[p];
    x[i] = s / l[i * k + i];
  }
  return true;
}
