import type { ChromaticityModel } from './chromaticityModel.ts';

/**
 * The empty-scene model: a mean image and a few orthonormal eigen-images (a PCA subspace) plus the
 * per-pixel noise level that remains after projecting the learning frames onto it.
 *
 * Layout, for d = width × height pixels and k components:
 * - `mean[i]`: mean grey level of pixel i (row-major, as in GreyFrame);
 * - `basis[i * k + j]`: component j at pixel i (pixel-major, so that projecting a frame reads one
 *   contiguous stream); the columns of the d×k matrix B are orthonormal;
 * - `noise[i]`: residual standard deviation of pixel i, grey levels.
 */
export interface Subspace {
  readonly width: number;
  readonly height: number;
  /** Number of eigen-images kept (k ≥ 0). */
  readonly components: number;
  readonly mean: Float32Array;
  readonly basis: Float32Array;
  /** Variance of the learning frames along each kept component (grey levels², descending). */
  readonly eigenvalues: Float64Array;
  /** Total variance of the learning frames: the trace of their covariance (grey levels²). */
  readonly totalVariance: number;
  /** Share of the total variance the kept components explain, 0..1. */
  readonly retainedVariance: number;
  /**
   * ρ of probabilistic PCA: the mean of the discarded eigenvalues over the d − k remaining
   * dimensions (Moghaddam & Pentland 1997, eq. 11), grey levels².
   */
  readonly residualVariance: number;
  readonly noise: Float32Array;
  /** Number of frames the model was learned from. */
  readonly frameCount: number;
  /**
   * The empty scene's colour statistics (fitChromaticity), when the model was learned in colour
   * mode for shadow suppression; saved with it in the model file (version 2). Default: none.
   */
  readonly colour?: ChromaticityModel;
}
