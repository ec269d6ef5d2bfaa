import { solveSymmetric } from '../solveSymmetric.ts';
import type { Subspace } from '../subspace.ts';
import type { Pass } from './pass.ts';
import { project } from './project.ts';
import { robustProject } from './robustProject.ts';
import { scaleStride } from './samplePass.ts';

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

/**
 * y from the pixel sample: the least-squares coordinates y = (B_Sᵀ B_S)⁻¹ B_Sᵀ (z − μ)_S, then the
 * robust steps on the sample as on the full frame. Returns the last left-out share of the sample.
 */
export function sampledCoefficients(pass: Pass, sample: CoefficientSample, y: Float64Array, steps: number, cutoff: number): number {
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
