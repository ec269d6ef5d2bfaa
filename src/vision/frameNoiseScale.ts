import { quickselect } from './quickselect.ts';

export interface FrameNoiseScaleOptions {
  /** Pixels between two sampled pixels (≥ 1); default 7, about 11 000 samples at 320×240. */
  stride?: number;
  /** Buffer for the samples, reused instead of allocating (length ≥ ⌈d / stride⌉). */
  scratch?: Float32Array;
}

/** Median of the χ² distribution with one degree of freedom (Φ⁻¹(0.75)² = 0.4549). */
export const chiSquare1Median = 0.45494;

/**
 * How much noisier a whole frame is than the learning frames: the median of (r_i / σ_i)² over
 * the frame divided by its expected value for Gaussian noise, the median of χ²₁. The median is a
 * robust scale estimate (as the median absolute deviation: Hampel 1974; Rousseeuw & Croux 1993):
 * people and objects cover a minority of the pixels and barely move it, while a change that
 * affects the whole view (exposure, flicker, wind in foliage) raises it for every pixel.
 *
 * Example: a frame whose residual is the learned noise gives about 1; twice the noise amplitude
 * gives about 4.
 *
 * @param energy e_i = r_i²
 * @param inverseNoiseVariance 1 / σ_i²
 */
export function frameNoiseScale(
  energy: Float32Array,
  inverseNoiseVariance: Float32Array,
  options: FrameNoiseScaleOptions = {},
): number {
  const { stride = 7, scratch } = options;
  if (!(Number.isInteger(stride) && stride >= 1)) throw new RangeError(`stride must be a whole number ≥ 1, got ${stride}`);
  const n = Math.ceil(energy.length / stride);
  if (n === 0) return 1;
  const buf = scratch ?? new Float32Array(n);
  if (buf.length < n) throw new RangeError(`scratch has length ${buf.length}, expected at least ${n}`);
  const sample = buf.length === n ? buf : buf.subarray(0, n);
  for (let i = 0, s = 0; i < energy.length; i += stride, s++) sample[s] = energy[i] * inverseNoiseVariance[i];
  return noiseScaleOfSample(sample);
}

/**
 * The noise scale of a sample of (r_i / σ_i)² values: their median / the median of χ²₁ (see
 * frameNoiseScale); 1 for an empty sample. The sample's order is changed.
 */
export function noiseScaleOfSample(sample: Float32Array): number {
  const n = sample.length;
  if (n === 0) return 1;
  // The median by selection, not a full sort: for an even count, the lower middle is selected and
  // the upper middle is then the smallest value above it.
  const half = n >> 1;
  if (n % 2 === 1) return quickselect(sample, half, { scratch: sample }) / chiSquare1Median;
  const lower = quickselect(sample, half - 1, { scratch: sample });
  let upper = sample[half];
  for (let s = half + 1; s < n; s++) if (sample[s] < upper) upper = sample[s];
  return (lower + upper) / 2 / chiSquare1Median;
}
