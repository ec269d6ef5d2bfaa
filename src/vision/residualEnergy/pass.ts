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
export function kernelWidth(k: number): number {
  return k <= 8 ? 8 : k <= 12 ? 12 : 0;
}

/** Pixels 0 … end − 1 can run the kernel of the given width without reading past the basis. */
export function kernelEnd(d: number, k: number, width: number): number {
  if (width === 0 || k === 0) return 0;
  return Math.max(0, d - Math.ceil((width - k) / k));
}

/** y_j = coordinate j, or 0 past k. */
export function at(y: Float64Array, k: number, j: number): number {
  return j < k ? y[j] : 0;
}
