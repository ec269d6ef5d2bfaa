import type { GreyFrame } from '../domain/frame.ts';
import { chiSquare1Median } from './frameNoiseScale.ts';
import { quickselect } from './quickselect.ts';
import { solveSymmetric } from './solveSymmetric.ts';
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
  /**
   * Work buffer for the noise-scale sample of the robust steps, length ≥ ⌈width × height / 7⌉
   * (inclusive), reused instead of allocating; its contents on return are unspecified.
   */
  scratch?: Float32Array;
  /**
   * Solve the coordinates y from this pixel sample instead of from every pixel (see
   * sampleCoefficientPixels); the residual is still computed at every pixel. Default: every pixel.
   */
  coefficientSample?: CoefficientSample;
}

/**
 * A fixed sample of a model's pixels to solve the coordinates y on: every `stride`-th pixel in
 * raster order, with their basis rows and Gram matrix B_Sᵀ B_S precomputed. Built once per model
 * by sampleCoefficientPixels; the mean and noise are read from the model on every frame, so a
 * mean updated in place is followed (a changed basis needs a new sample).
 */
export interface CoefficientSample {
  /** The basis it was built from (checked on use). */
  readonly basis: Float32Array;
  /** Every stride-th pixel, a whole number ≥ 1. */
  readonly stride: number;
  /** The sampled pixels' indices, increasing. */
  readonly pixels: Int32Array;
  /** Their basis rows, pixel-major like Subspace.basis. */
  readonly sampledBasis: Float32Array;
  /** B_Sᵀ B_S, k×k row-major (lower triangle used). */
  readonly gram: Float64Array;
  /** Work buffers for z − μ… of the sample, reused frame after frame. */
  readonly z: Float32Array;
  readonly mean: Float32Array;
  readonly weight: Float32Array;
  readonly energy: Float32Array;
  readonly noiseSample: Float32Array;
}

/**
 * The pixel sample for residualEnergy's `coefficientSample`: every `stride`-th pixel in raster
 * order (stride a whole number ≥ 1). With a width that is not a multiple of the stride the sample
 * is a slanted lattice that covers the frame evenly; the k coordinates are then least-squares
 * fits on d / stride pixels instead of d, which for k ≪ d / stride changes them by far less than
 * the noise (their variance grows by the factor stride).
 */
export function sampleCoefficientPixels(model: Subspace, stride: number): CoefficientSample {
  if (!(Number.isInteger(stride) && stride >= 1)) throw new RangeError(`stride must be a whole number ≥ 1, got ${stride}`);
  const { width, height, components: k, basis } = model;
  const d = width * height;
  const n = Math.ceil(d / stride);
  const pixels = new Int32Array(n);
  for (let s = 0, i = 0; s < n; s++, i += stride) pixels[s] = i;
  const sampledBasis = new Float32Array(n * k);
  const gram = new Float64Array(k * k);
  resampleBasis(basis, k, pixels, sampledBasis, gram);
  const buffer = () => new Float32Array(n);
  return {
    basis, stride, pixels, sampledBasis, gram,
    z: buffer(), mean: buffer(), weight: buffer(), energy: buffer(),
    noiseSample: new Float32Array(Math.ceil(n / scaleStride)),
  };
}

/**
 * Refreshes a coefficient sample after its basis was changed in place (the drifting counter's
 * rescaled eigen-images): the sampled rows and B_Sᵀ B_S, in the sample's own arrays.
 */
export function refreshCoefficientSample(sample: CoefficientSample, k: number): void {
  resampleBasis(sample.basis, k, sample.pixels, sample.sampledBasis, sample.gram);
}

function resampleBasis(basis: Float32Array, k: number, pixels: Int32Array, sampledBasis: Float32Array, gram: Float64Array): void {
  const n = pixels.length;
  for (let s = 0; s < n; s++) {
    const i = pixels[s];
    sampledBasis.set(basis.subarray(i * k, i * k + k), s * k);
  }
  gram.fill(0);
  for (let s = 0; s < n; s++) {
    const b = s * k;
    for (let p = 0; p < k; p++) {
      const bp = sampledBasis[b + p];
      for (let q = 0; q <= p; q++) gram[p * k + q] += bp * sampledBasis[b + q];
    }
  }
}

/** Pixels sampled for the robust noise scale: every 7th. */
export const scaleStride = 7;

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
 * left-out set is below 0.1 % of the frame or has settled: its size changed by at most 1 % from
 * the step before (then the fit barely moves: the next step would leave out nearly the same
 * pixels).
 *
 * Cost: the noise scale of a step needs only the sampled pixels (every 7th), so they are
 * projected first, and the full pass of the step then computes e_i, finds the left-out pixels
 * and accumulates their products at once. Each robust step is one pass over the frame and the
 * basis (plus a seventh of one); the plain projection and the final residual are one pass each,
 * and the final one is skipped when the last step left y as it was. The arithmetic is that of the
 * plain per-pixel loops, in the same order, so the results do not depend on this organisation.
 *
 * Example: with the mean as the only model (k = 0), e_i = (z_i − μ_i)².
 */
export function residualEnergy(
  model: Subspace,
  frame: GreyFrame,
  options: ResidualEnergyOptions = {},
): ResidualEnergy {
  const { out, outCoefficients, inverseNoiseVariance, robustSteps = 3, robustCutoff = 3, scratch, coefficientSample } = options;
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
  const samples = Math.ceil(d / scaleStride);
  if (scratch !== undefined && scratch.length < samples) {
    throw new RangeError(`scratch has length ${scratch.length}, expected at least ${samples}`);
  }
  const z = frame.data;
  const pass: Pass = { z, mean, basis, k, weight, energy, dffs: 0, normalised: 0 };
  let outlierShare = 0;
  let current = false; // whether pass.energy, dffs and normalised are those of the current y
  if (coefficientSample !== undefined && k > 0) {
    outlierShare = sampledCoefficients(pass, coefficientSample, y, robustSteps, robustCutoff);
  } else {
    // y = Bᵀ(z − μ), the pixel-major basis read as one stream.
    project(pass, y);
    if (k > 0 && robustSteps > 0) {
      const sample = scratch ?? new Float32Array(samples);
      const robust = robustProject(pass, y, robustSteps, robustCutoff, sample.length === samples ? sample : sample.subarray(0, samples), undefined);
      outlierShare = robust.share;
      current = robust.current;
    }
  }
  // r = (z − μ) − B y.
  if (!current) residualPass(pass, y, Infinity, undefined);
  let difs = 0;
  for (let j = 0; j < k; j++) if (eigenvalues[j] > 0) difs += (y[j] * y[j]) / eigenvalues[j];
  return { energy, coefficients: y, dffs: pass.dffs, difs, normalisedEnergy: pass.normalised / d, outlierShare };
}

/*
 * The passes are the plain per-pixel loops with the components unrolled: for k ≤ 8 an 8-wide
 * kernel, for k ≤ 12 a 12-wide one, the coordinates held in local variables (those past k are
 * 0, and the basis values they multiply, the next pixel's, change nothing: r − x·0 = r up to the
 * sign of a zero, which r² drops). The last few pixels, whose unrolled reads would run past the
 * end of the basis, and every pixel for k > 12, take the plain loops. Every residual still
 * subtracts its components one by one in the order j = 0, 1, …, k − 1, and every coordinate and
 * every sum still runs over the pixels in raster order, so the results are those of the plain
 * loops, bit for bit.
 */

/** A frame against a model, with the outputs of the last full residual pass (also the JS side of countingKernels' sample). */
export interface Pass {
  readonly z: Float32Array;
  readonly mean: Float32Array;
  readonly basis: Float32Array;
  readonly k: number;
  readonly weight: Float32Array;
  /** e_i = r_i² of the last full pass. */
  readonly energy: Float32Array;
  /** Σ e_i of the last full pass. */
  dffs: number;
  /** Σ e_i / σ_i² of the last full pass. */
  normalised: number;
}

/** Width of the unrolled kernel for k components: 8, 12, or 0 for the plain loops. */
function kernelWidth(k: number): number {
  return k <= 8 ? 8 : k <= 12 ? 12 : 0;
}

/** Pixels 0 … end − 1 can run the kernel of the given width without reading past the basis. */
function kernelEnd(d: number, k: number, width: number): number {
  if (width === 0 || k === 0) return 0;
  return Math.max(0, d - Math.ceil((width - k) / k));
}

/**
 * y from the pixel sample: the least-squares coordinates y = (B_Sᵀ B_S)⁻¹ B_Sᵀ (z − μ)_S, then the
 * robust steps on the sample as on the full frame. Returns the last left-out share of the sample.
 */
function sampledCoefficients(pass: Pass, sample: CoefficientSample, y: Float64Array, steps: number, cutoff: number): number {
  const { k } = pass;
  if (sample.basis !== pass.basis || sample.sampledBasis.length !== sample.pixels.length * k) {
    throw new RangeError('coefficientSample was built for another model');
  }
  const { pixels, z, mean, weight } = sample;
  for (let s = 0; s < pixels.length; s++) {
    const i = pixels[s];
    z[s] = pass.z[i];
    mean[s] = pass.mean[i];
    weight[s] = pass.weight[i];
  }
  const sub: Pass = { z, mean, basis: sample.sampledBasis, k, weight, energy: sample.energy, dffs: 0, normalised: 0 };
  const rhs = new Float64Array(k);
  project(sub, rhs);
  if (!solveSymmetric(sample.gram, rhs, k, y)) y.fill(0);
  if (steps <= 0) return 0;
  return robustProject(sub, y, steps, cutoff, sample.noiseSample, sample.gram).share;
}

/** y_j = coordinate j, or 0 past k. */
function at(y: Float64Array, k: number, j: number): number {
  return j < k ? y[j] : 0;
}

/** y = Bᵀ(z − μ). */
function project(pass: Pass, y: Float64Array): void {
  const { z, mean, basis, k } = pass;
  const d = z.length;
  y.fill(0);
  const width = kernelWidth(k);
  const end = kernelEnd(d, k, width);
  if (width === 8) project8(pass, y, end);
  else if (width === 12) project12(pass, y, end);
  for (let i = end, b = end * k; i < d; i++, b += k) {
    const c = z[i] - mean[i];
    for (let j = 0; j < k; j++) y[j] += basis[b + j] * c;
  }
}

/**
 * The full pass of r = (z − μ) − B y: e_i = r_i² into pass.energy, with dffs and the normalised
 * sum; every pixel whose e_i / σ_i² (as a Float32) exceeds `limit` (or is NaN) is handed to
 * `outliers`. Returns the number of pixels handed over.
 */
function residualPass(pass: Pass, y: Float64Array, limit: number, outliers: Outliers | undefined): number {
  const { z, mean, basis, k, weight, energy } = pass;
  const d = z.length;
  const width = kernelWidth(k);
  const end = kernelEnd(d, k, width);
  pass.dffs = 0;
  pass.normalised = 0;
  let count = width === 8 ? residual8(pass, y, limit, outliers, end) : width === 12 ? residual12(pass, y, limit, outliers, end) : 0;
  let dffs = pass.dffs;
  let normalised = pass.normalised;
  for (let i = end, b = end * k; i < d; i++, b += k) {
    let r = z[i] - mean[i];
    for (let j = 0; j < k; j++) r -= basis[b + j] * y[j];
    const e = r * r;
    energy[i] = e;
    dffs += e;
    const v = e * weight[i];
    normalised += v;
    if (!(Math.fround(v) <= limit) && outliers !== undefined) {
      outliers.add(i, z[i] - mean[i]);
      count++;
    }
  }
  pass.dffs = dffs;
  pass.normalised = normalised;
  return count;
}

/** (r/σ)² as Float32s at every scaleStride-th pixel (0, scaleStride, …) into sample. */
export function samplePass(pass: Pass, y: Float64Array, sample: Float32Array): void {
  const { z, mean, basis, k, weight } = pass;
  const d = z.length;
  const width = kernelWidth(k);
  const end = kernelEnd(d, k, width);
  if (width === 8) sample8(pass, y, sample, end);
  else if (width === 12) sample12(pass, y, sample, end);
  const first = Math.ceil(end / scaleStride);
  for (let i = first * scaleStride, b = i * k, s = first; i < d; i += scaleStride, b += k * scaleStride, s++) {
    let r = z[i] - mean[i];
    for (let j = 0; j < k; j++) r -= basis[b + j] * y[j];
    sample[s] = r * r * weight[i];
  }
}

/** y[j] += Σ B[i, j] · (z − μ)_i over the pixels i < end, 8 components unrolled (k ≤ 8). */
function project8(pass: Pass, y: Float64Array, end: number): void {
  const { z, mean, basis, k } = pass;
  let y0 = 0, y1 = 0, y2 = 0, y3 = 0, y4 = 0, y5 = 0, y6 = 0, y7 = 0;
  for (let i = 0, b = 0; i < end; i++, b += k) {
    const c = z[i] - mean[i];
    y0 += basis[b] * c;
    y1 += basis[b + 1] * c;
    y2 += basis[b + 2] * c;
    y3 += basis[b + 3] * c;
    y4 += basis[b + 4] * c;
    y5 += basis[b + 5] * c;
    y6 += basis[b + 6] * c;
    y7 += basis[b + 7] * c;
  }
  if (k > 0) y[0] = y0;
  if (k > 1) y[1] = y1;
  if (k > 2) y[2] = y2;
  if (k > 3) y[3] = y3;
  if (k > 4) y[4] = y4;
  if (k > 5) y[5] = y5;
  if (k > 6) y[6] = y6;
  if (k > 7) y[7] = y7;
}

/** y[j] += Σ B[i, j] · (z − μ)_i over the pixels i < end, 12 components unrolled (k ≤ 12). */
function project12(pass: Pass, y: Float64Array, end: number): void {
  const { z, mean, basis, k } = pass;
  let y0 = 0, y1 = 0, y2 = 0, y3 = 0, y4 = 0, y5 = 0, y6 = 0, y7 = 0, y8 = 0, y9 = 0, y10 = 0, y11 = 0;
  for (let i = 0, b = 0; i < end; i++, b += k) {
    const c = z[i] - mean[i];
    y0 += basis[b] * c;
    y1 += basis[b + 1] * c;
    y2 += basis[b + 2] * c;
    y3 += basis[b + 3] * c;
    y4 += basis[b + 4] * c;
    y5 += basis[b + 5] * c;
    y6 += basis[b + 6] * c;
    y7 += basis[b + 7] * c;
    y8 += basis[b + 8] * c;
    y9 += basis[b + 9] * c;
    y10 += basis[b + 10] * c;
    y11 += basis[b + 11] * c;
  }
  if (k > 0) y[0] = y0;
  if (k > 1) y[1] = y1;
  if (k > 2) y[2] = y2;
  if (k > 3) y[3] = y3;
  if (k > 4) y[4] = y4;
  if (k > 5) y[5] = y5;
  if (k > 6) y[6] = y6;
  if (k > 7) y[7] = y7;
  if (k > 8) y[8] = y8;
  if (k > 9) y[9] = y9;
  if (k > 10) y[10] = y10;
  if (k > 11) y[11] = y11;
}

/** The full pass over the pixels i < end, 8 components unrolled (k ≤ 8); see residualPass. */
function residual8(pass: Pass, y: Float64Array, limit: number, outliers: Outliers | undefined, end: number): number {
  const { z, mean, basis, k, weight, energy } = pass;
  const y0 = at(y, k, 0), y1 = at(y, k, 1), y2 = at(y, k, 2), y3 = at(y, k, 3);
  const y4 = at(y, k, 4), y5 = at(y, k, 5), y6 = at(y, k, 6), y7 = at(y, k, 7);
  let dffs = pass.dffs;
  let normalised = pass.normalised;
  let count = 0;
  for (let i = 0, b = 0; i < end; i++, b += k) {
    let r = z[i] - mean[i];
    r -= basis[b] * y0;
    r -= basis[b + 1] * y1;
    r -= basis[b + 2] * y2;
    r -= basis[b + 3] * y3;
    r -= basis[b + 4] * y4;
    r -= basis[b + 5] * y5;
    r -= basis[b + 6] * y6;
    r -= basis[b + 7] * y7;
    const e = r * r;
    energy[i] = e;
    dffs += e;
    const v = e * weight[i];
    normalised += v;
    if (!(Math.fround(v) <= limit) && outliers !== undefined) {
      outliers.add(i, z[i] - mean[i]);
      count++;
    }
  }
  pass.dffs = dffs;
  pass.normalised = normalised;
  return count;
}

/** The full pass over the pixels i < end, 12 components unrolled (k ≤ 12); see residualPass. */
function residual12(pass: Pass, y: Float64Array, limit: number, outliers: Outliers | undefined, end: number): number {
  const { z, mean, basis, k, weight, energy } = pass;
  const y0 = at(y, k, 0), y1 = at(y, k, 1), y2 = at(y, k, 2), y3 = at(y, k, 3);
  const y4 = at(y, k, 4), y5 = at(y, k, 5), y6 = at(y, k, 6), y7 = at(y, k, 7);
  const y8 = at(y, k, 8), y9 = at(y, k, 9), y10 = at(y, k, 10), y11 = at(y, k, 11);
  let dffs = pass.dffs;
  let normalised = pass.normalised;
  let count = 0;
  for (let i = 0, b = 0; i < end; i++, b += k) {
    let r = z[i] - mean[i];
    r -= basis[b] * y0;
    r -= basis[b + 1] * y1;
    r -= basis[b + 2] * y2;
    r -= basis[b + 3] * y3;
    r -= basis[b + 4] * y4;
    r -= basis[b + 5] * y5;
    r -= basis[b + 6] * y6;
    r -= basis[b + 7] * y7;
    r -= basis[b + 8] * y8;
    r -= basis[b + 9] * y9;
    r -= basis[b + 10] * y10;
    r -= basis[b + 11] * y11;
    const e = r * r;
    energy[i] = e;
    dffs += e;
    const v = e * weight[i];
    normalised += v;
    if (!(Math.fround(v) <= limit) && outliers !== undefined) {
      outliers.add(i, z[i] - mean[i]);
      count++;
    }
  }
  pass.dffs = dffs;
  pass.normalised = normalised;
  return count;
}

/** The sample pass over the sampled pixels s · scaleStride < end, 8 components unrolled (k ≤ 8); see samplePass. */
function sample8(pass: Pass, y: Float64Array, sample: Float32Array, end: number): void {
  const { z, mean, basis, k, weight } = pass;
  const y0 = at(y, k, 0), y1 = at(y, k, 1), y2 = at(y, k, 2), y3 = at(y, k, 3);
  const y4 = at(y, k, 4), y5 = at(y, k, 5), y6 = at(y, k, 6), y7 = at(y, k, 7);
  const stride = k * scaleStride;
  for (let i = 0, b = 0, s = 0; i < end; i += scaleStride, b += stride, s++) {
    let r = z[i] - mean[i];
    r -= basis[b] * y0;
    r -= basis[b + 1] * y1;
    r -= basis[b + 2] * y2;
    r -= basis[b + 3] * y3;
    r -= basis[b + 4] * y4;
    r -= basis[b + 5] * y5;
    r -= basis[b + 6] * y6;
    r -= basis[b + 7] * y7;
    sample[s] = r * r * weight[i];
  }
}

/** The sample pass over the sampled pixels s · scaleStride < end, 12 components unrolled (k ≤ 12); see samplePass. */
function sample12(pass: Pass, y: Float64Array, sample: Float32Array, end: number): void {
  const { z, mean, basis, k, weight } = pass;
  const y0 = at(y, k, 0), y1 = at(y, k, 1), y2 = at(y, k, 2), y3 = at(y, k, 3);
  const y4 = at(y, k, 4), y5 = at(y, k, 5), y6 = at(y, k, 6), y7 = at(y, k, 7);
  const y8 = at(y, k, 8), y9 = at(y, k, 9), y10 = at(y, k, 10), y11 = at(y, k, 11);
  const stride = k * scaleStride;
  for (let i = 0, b = 0, s = 0; i < end; i += scaleStride, b += stride, s++) {
    let r = z[i] - mean[i];
    r -= basis[b] * y0;
    r -= basis[b + 1] * y1;
    r -= basis[b + 2] * y2;
    r -= basis[b + 3] * y3;
    r -= basis[b + 4] * y4;
    r -= basis[b + 5] * y5;
    r -= basis[b + 6] * y6;
    r -= basis[b + 7] * y7;
    r -= basis[b + 8] * y8;
    r -= basis[b + 9] * y9;
    r -= basis[b + 10] * y10;
    r -= basis[b + 11] * y11;
    sample[s] = r * r * weight[i];
  }
}

/**
 * The left-out pixels of one robust step, gathered in runs of `outlierRun` (their basis rows,
 * then z − μ) and subtracted from the normal equations: normal = I − B_Oᵀ B_O and
 * rhs = Bᵀ(z − μ) − B_Oᵀ(z − μ)_O.
 */
class Outliers {
  private run = 0;
  private readonly gathered: Float64Array;

  constructor(
    private readonly basis: Float32Array,
    private readonly k: number,
    readonly normal: Float64Array,
    readonly rhs: Float64Array,
    /** BᵀB when it is not the identity (a pixel sample). */
    private readonly gram?: Float64Array,
  ) {
    this.gathered = new Float64Array(outlierRun * (k + 1));
  }

  /** Starts a step: normal = BᵀB (I for the full orthonormal basis), rhs = full. */
  reset(full: Float64Array): void {
    const { k, normal, rhs, gram } = this;
    if (gram !== undefined) normal.set(gram);
    else {
      normal.fill(0);
      for (let j = 0; j < k; j++) normal[j * k + j] = 1;
    }
    rhs.set(full);
    this.run = 0;
  }

  add(i: number, c: number): void {
    const { k, basis, gathered } = this;
    const g = this.run * (k + 1);
    for (let j = 0, b = i * k; j < k; j++, b++) gathered[g + j] = basis[b];
    gathered[g + k] = c;
    if (++this.run === outlierRun) this.flush();
  }

  /** Subtracts the gathered run. */
  flush(): void {
    if (this.run > 0) subtractOuter(this.gathered, this.run, this.k, this.normal, this.rhs);
    this.run = 0;
  }
}

/**
 * Refines y in place by robust steps; `sample` (length ⌈d / scaleStride⌉) holds the noise-scale
 * sample. Returns the last left-out share, and whether the last full pass was made with the
 * final y (then energy, dffs and the normalised sum in `pass` are final).
 */
function robustProject(
  pass: Pass,
  y: Float64Array,
  steps: number,
  cutoff: number,
  sample: Float32Array,
  gram: Float64Array | undefined,
): { share: number; current: boolean } {
  const { basis, k } = pass;
  const d = pass.z.length;
  // Bᵀ(z − μ) over all pixels: y itself when BᵀB = I, else G y.
  const full = gram === undefined ? Float64Array.from(y) : symmetricTimes(gram, y, k);
  const outliers = new Outliers(basis, k, new Float64Array(k * k), new Float64Array(k), gram);
  let lastCount = -1;
  let share = 0;
  for (let step = 0; step < steps; step++) {
    // The noise scale from the sampled pixels' (r/σ)² (as Float32s), their median taken as the
    // sorted sample's element ⌊n/2⌋ (the upper middle for an even count).
    samplePass(pass, y, sample);
    const scale = Math.max(1, quickselect(sample, sample.length >> 1, { scratch: sample }) / chiSquare1Median);
    const limit = cutoff * cutoff * scale;
    outliers.reset(full);
    const count = residualPass(pass, y, limit, outliers);
    outliers.flush();
    share = count / d;
    // Nothing worth leaving out, or too little left to trust.
    if (share < 0.001 || share > 0.8) return { share, current: true };
    if (!solveSymmetric(outliers.normal, outliers.rhs, k, y)) return { share, current: true };
    if (settled(count, lastCount)) break;
    lastCount = count;
  }
  return { share, current: false };
}

/**
 * Whether a robust step's left-out set has settled: its size within 1 % (inclusive) of the
 * previous step's (never for the first step, whose previous count is −1).
 */
export function settled(count: number, lastCount: number): boolean {
  return lastCount >= 0 && Math.abs(count - lastCount) <= 0.01 * count;
}

/** Left-out pixels gathered before their products are subtracted from the normal equations. */
const outlierRun = 64;

/**
 * normal[p·k + q] −= Σ_o g[o, p] · g[o, q] for q ≤ p, and rhs[p] −= Σ_o g[o, p] · g[o, k], over
 * the `m` gathered rows g[o, ·] (stride k + 1), each sum taken in row order as the per-pixel
 * loop would; four entries at a time share the pass over the rows.
 */
function subtractOuter(gathered: Float64Array, m: number, k: number, normal: Float64Array, rhs: Float64Array): void {
  const stride = k + 1;
  for (let p = 0; p < k; p++) {
    const row = p * k;
    let q = 0;
    for (; q + 3 <= p; q += 4) {
      let a0 = normal[row + q], a1 = normal[row + q + 1], a2 = normal[row + q + 2], a3 = normal[row + q + 3];
      for (let o = 0, g = 0; o < m; o++, g += stride) {
        const bp = gathered[g + p];
        a0 -= bp * gathered[g + q];
        a1 -= bp * gathered[g + q + 1];
        a2 -= bp * gathered[g + q + 2];
        a3 -= bp * gathered[g + q + 3];
      }
      normal[row + q] = a0, normal[row + q + 1] = a1, normal[row + q + 2] = a2, normal[row + q + 3] = a3;
    }
    // The rest of the row (at most 3 entries up to the diagonal) together with rhs[p].
    let r = rhs[p];
    let a0 = q <= p ? normal[row + q] : 0, a1 = q + 1 <= p ? normal[row + q + 1] : 0, a2 = q + 2 <= p ? normal[row + q + 2] : 0;
    const left = p - q + 1;
    for (let o = 0, g = 0; o < m; o++, g += stride) {
      const bp = gathered[g + p];
      r -= bp * gathered[g + k];
      if (left > 0) a0 -= bp * gathered[g + q];
      if (left > 1) a1 -= bp * gathered[g + q + 1];
      if (left > 2) a2 -= bp * gathered[g + q + 2];
    }
    rhs[p] = r;
    if (left > 0) normal[row + q] = a0;
    if (left > 1) normal[row + q + 1] = a1;
    if (left > 2) normal[row + q + 2] = a2;
  }
}

/** A y for symmetric A (lower triangle given, row-major k×k). */
export function symmetricTimes(a: Float64Array, y: Float64Array, k: number): Float64Array {
  const out = new Float64Array(k);
  for (let p = 0; p < k; p++) {
    let sum = 0;
    for (let q = 0; q < k; q++) sum += (q <= p ? a[p * k + q] : a[q * k + p]) * y[q];
    out[p] = sum;
  }
  return out;
}
