import type { GreyFrame } from '../frames/frame.ts';
import type { Subspace } from './subspace.ts';

/** Per-pixel residual energy of a frame and the per-frame distances of probabilistic PCA. */
export interface ResidualEnergy {
  /** e_i = r_i², grey levels², row-major like the frame. */
  readonly energy: Float32Array;
  /** Coordinates y = Bᵀ(z − μ) of the frame in the subspace (length k). */
  readonly coefficients: Float64Array;
  /** Distance from feature space ‖r‖² = Σ e_i (grey levels²). */
  readonly dffs: number;
  /** Distance in feature space Σ y_j² / λ_j: the Mahalanobis term inside the subspace. */
  readonly difs: number;
  /** Mean of e_i / σ_i² over the frame: about 1 for an empty scene the model explains. */
  readonly normalisedEnergy: number;
}

export interface ResidualEnergyOptions {
  /** Buffer for `energy` (length width × height), reused instead of allocating. */
  out?: Float32Array;
  /** Buffer for `coefficients` (length k), reused instead of allocating. */
  outCoefficients?: Float64Array;
  /** Precomputed 1 / σ_i² (length width × height), to save the division per pixel. */
  inverseNoiseVariance?: Float32Array;
}

/**
 * Residual of a frame after projecting it onto the empty-scene subspace:
 * r = (z − μ) − B·Bᵀ(z − μ), and per pixel e_i = r_i².
 *
 * This is the "distance from feature space" of Moghaddam & Pentland (1997, §2): what the
 * eigen-images cannot reconstruct is what is new in the scene. Their "distance in feature space"
 * (the Mahalanobis distance of y under the eigenvalues λ) is returned too, for health checks: a
 * frame far inside the subspace but off its usual range hints at a lighting change.
 *
 * Example: with the mean as the only model (k = 0), e_i = (z_i − μ_i)².
 */
export function residualEnergy(
  model: Subspace,
  frame: GreyFrame,
  options: ResidualEnergyOptions = {},
): ResidualEnergy {
  const { out, outCoefficients, inverseNoiseVariance } = options;
  const { width, height, components: k, mean, basis, eigenvalues, noise } = model;
  if (frame.width !== width || frame.height !== height) {
    throw new RangeError(`frame is ${frame.width}×${frame.height}, the model is ${width}×${height}`);
  }
  const d = width * height;
  const energy = out ?? new Float32Array(d);
  if (energy.length !== d) throw new RangeError(`out has length ${energy.length}, expected ${d}`);
  const y = outCoefficients ?? new Float64Array(k);
  if (y.length !== k) throw new RangeError(`outCoefficients has length ${y.length}, expected ${k}`);
  const z = frame.data;

  // Pass 1: y = Bᵀ(z − μ), the pixel-major basis read as one stream.
  y.fill(0);
  for (let i = 0, b = 0; i < d; i++, b += k) {
    const c = z[i] - mean[i];
    for (let j = 0; j < k; j++) y[j] += basis[b + j] * c;
  }
  // Pass 2: r = (z − μ) − B y.
  let dffs = 0;
  let normalised = 0;
  for (let i = 0, b = 0; i < d; i++, b += k) {
    let r = z[i] - mean[i];
    for (let j = 0; j < k; j++) r -= basis[b + j] * y[j];
    const e = r * r;
    energy[i] = e;
    dffs += e;
    normalised += inverseNoiseVariance ? e * inverseNoiseVariance[i] : e / (noise[i] * noise[i]);
  }
  let difs = 0;
  for (let j = 0; j < k; j++) if (eigenvalues[j] > 0) difs += (y[j] * y[j]) / eigenvalues[j];
  return { energy, coefficients: y, dffs, difs, normalisedEnergy: normalised / d };
}
