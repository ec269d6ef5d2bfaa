import type { GreyFrame } from '../domain/frame.ts';
import type { Subspace } from './subspace.ts';
import { type CoefficientSample, sampledCoefficients } from './residualEnergy/coefficientSample.ts';
import type { Pass } from './residualEnergy/pass.ts';
import { project } from './residualEnergy/project.ts';
import { residualPass } from './residualEnergy/residualPass.ts';
import { robustProject } from './residualEnergy/robustProject.ts';
import { scaleStride } from './residualEnergy/samplePass.ts';

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
