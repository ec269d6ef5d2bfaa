import type { CentredFrames } from '../learningKernels.ts';
import { symmetricEigen } from '../symmetricEigen.ts';
import { type GramFit, rankOf } from './gramFit.ts';
import { orthonormaliseColumns } from './orthonormaliseColumns.ts';

/**
 * PCA of the frames `subset` (indices into the globally centred frames) by the method of
 * snapshots. Their own Gram matrix, centred on their own mean, comes from the full one by double
 * centring: (c_a − δ)·(c_b − δ) = G_ab − r_a − r_b + g, with r the subset row means of G and g
 * their mean, δ the subset's mean of the c_t.
 */
export function fitFromGram(
  gram: Float64Array,
  n: number,
  subset: readonly number[],
  centred: CentredFrames,
  d: number,
  choice: { components: number | undefined; variance: number; maxComponents: number },
): GramFit {
  const m = subset.length;
  const whole = m === n;
  const g = new Float64Array(m * m);
  const rowMean = new Float64Array(m);
  for (let a = 0; a < m; a++) {
    let s = 0;
    for (let b = 0; b < m; b++) s += gram[subset[a] * n + subset[b]];
    rowMean[a] = whole ? 0 : s / m;
  }
  let grand = 0;
  for (let a = 0; a < m; a++) grand += rowMean[a];
  grand /= m;
  for (let a = 0; a < m; a++) {
    for (let b = 0; b < m; b++) g[a * m + b] = gram[subset[a] * n + subset[b]] - rowMean[a] - rowMean[b] + grand;
  }
  const { values, vectors } = symmetricEigen(g, m);

  let total = 0;
  for (let i = 0; i < m; i++) total += g[i * m + i];
  // Non-zero directions: at most m − 1 (centring removes one) and at most d.
  const tiny = Math.max(values[0], 0) * 1e-10;
  let rank = 0;
  while (rank < rankOf(m, d) && values[rank] > tiny) rank++;

  let k: number;
  const { components, variance, maxComponents } = choice;
  if (components !== undefined) {
    if (components > rank) {
      throw new RangeError(
        `components ${components} is more than the ${rank} independent directions in ${m} learning frames`,
      );
    }
    k = components;
  } else {
    k = 0;
    let kept = 0;
    while (k < rank && k < maxComponents && (total <= 0 || kept / total < variance)) kept += values[k++];
  }

  // u_j = Σ_t w_jt (c_t − δ) = Σ_t w_jt c_t − (Σ_t w_jt) δ with w_jt = v_jt / √λ_j, all k at
  // once and, for a subset, δ = Σ_t c_t / m as row k: one pass over the frames.
  const rows = whole ? k : k + 1;
  const eigenvalues = new Float64Array(k);
  const weights = new Float64Array(rows * m);
  const weightSums = new Float64Array(k);
  let keptSum = 0;
  for (let j = 0; j < k; j++) {
    keptSum += values[j];
    eigenvalues[j] = values[j] / (m - 1);
    const s = Math.sqrt(values[j]);
    for (let t = 0; t < m; t++) {
      weights[j * m + t] = vectors[j * m + t] / s;
      weightSums[j] += weights[j * m + t];
    }
  }
  if (!whole) weights.fill(1 / m, k * m);
  const acc = centred.combine(subset, weights, rows);
  const offset = whole ? new Float32Array(d) : Float32Array.from(acc[k]);
  const basis = new Float32Array(d * k);
  for (let i = 0, b = 0; i < d; i++) {
    const o = offset[i];
    for (let j = 0; j < k; j++, b++) basis[b] = acc[j][i] - weightSums[j] * o;
  }
  orthonormaliseColumns(basis, d, k);
  return { offset, basis, eigenvalues, k, keptSum, total };
}
