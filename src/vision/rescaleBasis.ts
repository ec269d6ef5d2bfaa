import type { Subspace } from './subspace.ts';

export interface RescaleBasisOptions {
  /** Darkest learned mean taken as it is when forming μ/μ₀, grey levels (> 0); default 8. Darker pixels use this instead. */
  floor?: number;
  /** Bounds of the per-pixel factor μ/μ₀, [low, high] with 0 < low ≤ 1 ≤ high; default [0.25, 4]. */
  bounds?: readonly [number, number];
  /** Basis to write into (length d·k); default: a new one. Must not be `learned.basis`. */
  out?: Float32Array;
}

/**
 * The learned eigen-images under the light of the adapted mean: B = orth(S·B₀) with
 * S = diag(μ_i / μ₀_i), the Q factor of the QR decomposition of S·B₀, so that the columns are
 * orthonormal again (BᵀB = I, which the residual's projection relies on) and span the scaled
 * learned variations. Computed as Cholesky QR: G = (S·B₀)ᵀ(S·B₀) = RᵀR by Cholesky, then
 * B = S·B₀·R⁻¹ (two passes over the pixels, in Float64). Its loss of orthogonality grows with the
 * square of the condition number of S·B₀ (Yamamoto, Nakatsukasa, Yanagisawa & Fukaya 2015), which
 * is at most the ratio of the factor bounds (16), so it stays far below Float32 precision.
 *
 * Why: light multiplies everything the camera sees, the learned variations as much as the mean.
 * Where a sunbeam has made the floor 1.5 times as bright, the lamp that the model learned to
 * switch on and off brightens it 1.5 times as much as in the learning frames; eigen-images left
 * as learned would leave the difference as residual at every switch. Where a static object was
 * absorbed, its brightness relative to what it covered is the factor its variations need. Always
 * scaled from the learned basis, so errors do not build up over many rescalings. The eigenvalues
 * (used only for the distance in feature space, a health figure) are left as learned.
 *
 * Example: one component (½, ½, ½, ½) with μ₀ = (100, 100, 100, 100) and μ = (200, 100, 100, 100)
 * becomes (2, 1, 1, 1) / √7.
 *
 * @param learned the model as learned (μ₀, B₀)
 * @param mean the adapted mean μ (length d)
 */
export function rescaleBasis(learned: Pick<Subspace, 'width' | 'height' | 'components' | 'mean' | 'basis'>, mean: Float32Array, options: RescaleBasisOptions = {}): Float32Array {
  const { floor = 8, bounds = [0.25, 4], out } = options;
  const { width, height, components: k, mean: mean0, basis: basis0 } = learned;
  const d = width * height;
  if (mean.length !== d || mean0.length !== d || basis0.length !== d * k) throw new RangeError(`mean and basis must fit ${width}×${height} pixels and ${k} components`);
  if (!(floor > 0)) throw new RangeError(`floor must be > 0 grey levels, got ${floor}`);
  const [low, high] = bounds;
  if (!(low > 0 && low <= 1 && high >= 1)) throw new RangeError(`bounds must be [low, high] with 0 < low ≤ 1 ≤ high, got [${low}, ${high}]`);
  const basis = out ?? new Float32Array(d * k);
  if (basis.length !== d * k) throw new RangeError(`out has length ${basis.length}, expected ${d * k}`);
  if (basis === basis0) throw new RangeError('out must not be the learned basis');
  if (k === 0) return basis;

  // Pass 1: the scale factors and the lower triangle of G = (S·B₀)ᵀ(S·B₀).
  const scale = new Float64Array(d);
  const gram = new Float64Array(k * k);
  const row = new Float64Array(k);
  for (let i = 0, b = 0; i < d; i++, b += k) {
    const s = Math.min(high, Math.max(low, Math.max(floor, mean[i]) / Math.max(floor, mean0[i])));
    scale[i] = s;
    for (let j = 0; j < k; j++) row[j] = basis0[b + j] * s;
    for (let p = 0; p < k; p++) {
      const v = row[p];
      for (let q = 0; q <= p; q++) gram[p * k + q] += v * row[q];
    }
  }
  // G = L·Lᵀ (L = Rᵀ, lower triangular).
  const l = new Float64Array(k * k);
  for (let p = 0; p < k; p++) {
    for (let q = 0; q <= p; q++) {
      let v = gram[p * k + q];
      for (let m = 0; m < q; m++) v -= l[p * k + m] * l[q * k + m];
      if (p === q) {
        if (!(v > 1e-18)) throw new RangeError(`component ${p} vanished when rescaled (the learned basis is not of full rank)`);
        l[p * k + p] = Math.sqrt(v);
      } else {
        l[p * k + q] = v / l[q * k + q];
      }
    }
  }
  // Pass 2: each row of B solves x·Lᵀ = row of S·B₀, i.e. L·xᵀ = rowᵀ (forward substitution).
  for (let i = 0, b = 0; i < d; i++, b += k) {
    const s = scale[i];
    for (let p = 0; p < k; p++) {
      let v = basis0[b + p] * s;
      for (let m = 0; m < p; m++) v -= l[p * k + m] * row[m];
      row[p] = v / l[p * k + p];
    }
    for (let p = 0; p < k; p++) basis[b + p] = row[p];
  }
  return basis;
}
