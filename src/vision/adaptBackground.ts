import type { GreyFrame, Mask } from '../frames/frame.ts';

export interface AdaptBackgroundOptions {
  /** Forgetting factor per update, 0..1: the share of the new residual taken into the mean; default 0.01. */
  rate?: number;
  /**
   * Pixels that are foreground right now but have been so for at least `absorbAfter` updates
   * and may be absorbed (1) or not (0), per pixel; default none (foreground is never absorbed).
   */
  absorbable?: Uint8Array;
  /** Updates a pixel must stay foreground before it is absorbed (with `absorbable`); default 600. */
  absorbAfter?: number;
  /** Per-pixel run of consecutive foreground updates, kept by the caller between calls. */
  foregroundRuns?: Uint16Array;
}

/**
 * Follows slow drift of the empty scene (daylight, lamps warming up, exposure) by moving the mean
 * image towards what the model leaves unexplained, on background pixels only:
 * μ_i ← μ_i + rate · r_i where the pixel is not foreground, with r = (z − μ) − B·y. This is the
 * mean update with a forgetting factor of incremental subspace learning (Levy & Lindenbaum 2000;
 * Ross, Lim, Lin & Yang 2008), restricted to pixels judged background, so that a person sitting
 * still is never absorbed. The eigen-images are kept; only the mean moves.
 *
 * A changed but static object (a chair moved, a box placed) stays foreground until absorbed:
 * pixels marked `absorbable` that have been foreground for `absorbAfter` consecutive updates are
 * taken into the mean at once (rooms leave this off by default: people sit still for long).
 *
 * Mutates `mean` (the caller's own copy, never the stored model) and `foregroundRuns`.
 * Returns the number of pixels absorbed.
 *
 * @param coefficients y of the frame (from residualEnergy), length k
 * @param basis pixel-major eigen-images (length d·k)
 * @param foreground the frame's foreground mask (cleaned); pixels set there are not updated
 */
export function adaptBackground(
  mean: Float32Array,
  basis: Float32Array,
  coefficients: Float64Array,
  frame: GreyFrame,
  foreground: Mask,
  options: AdaptBackgroundOptions = {},
): number {
  const { rate = 0.01, absorbable, absorbAfter = 600, foregroundRuns } = options;
  if (!(rate >= 0 && rate <= 1)) throw new RangeError(`rate must be in 0..1, got ${rate}`);
  const d = frame.width * frame.height;
  const k = coefficients.length;
  if (mean.length !== d || basis.length !== d * k || foreground.data.length !== d) {
    throw new RangeError(`mean, basis and mask must fit a ${frame.width}×${frame.height} frame with ${k} components`);
  }
  const z = frame.data;
  const fg = foreground.data;
  let absorbed = 0;
  for (let i = 0, b = 0; i < d; i++, b += k) {
    let r = z[i] - mean[i];
    for (let j = 0; j < k; j++) r -= basis[b + j] * coefficients[j];
    if (fg[i] === 0) {
      if (foregroundRuns) foregroundRuns[i] = 0;
      mean[i] += rate * r;
    } else if (foregroundRuns) {
      const run = Math.min(65535, foregroundRuns[i] + 1);
      foregroundRuns[i] = run;
      if (absorbable && absorbable[i] && run >= absorbAfter) {
        mean[i] += r;
        foregroundRuns[i] = 0;
        absorbed++;
      }
    }
  }
  return absorbed;
}
