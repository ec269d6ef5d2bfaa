/** One decomposition of (a subset of) the learning frames, by snapshots (fitFromGram) or randomized (randomizedFit). */
export interface GramFit {
  /** The subset's mean minus the global mean (δ): the subset's frames are c_t − δ. */
  offset: Float32Array;
  basis: Float32Array;
  eigenvalues: Float64Array;
  k: number;
  /** Sum of the kept Gram eigenvalues and of all of them (the trace), grey levels². */
  keptSum: number;
  total: number;
  /**
   * Randomized fits only: the coefficients of every learning frame on the fit's `block` Ritz
   * eigen-images (n × block, frame-major), the warm start of the cross-validation halves.
   */
  coefficients?: Float64Array;
  block?: number;
}

/** The largest number of independent directions n centred frames of d pixels can have. */
export function rankOf(n: number, d: number): number {
  return Math.max(0, Math.min(n - 1, d));
}
