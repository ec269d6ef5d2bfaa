import type { CentredFrames } from '../learningKernels.ts';
import { randomizedEigen } from '../randomizedEigen.ts';
import { type GramFit, rankOf } from './gramFit.ts';
import { orthonormaliseColumns } from './orthonormaliseColumns.ts';

/** Extra directions iterated beyond the components wanted (Halko et al. 2011, §4.2: p = 5 to 10). */
export const OVERSAMPLING = 8;
/**
 * Subspace iterations of the whole fit from its random start (Halko et al. 2011, §4.5). Each
 * shrinks the angle of a kept direction by (λ_next / λ_kept)²: with a gap of 6.6 three leave
 * 3e-3 rad (test/vision/fitSubspace.test.ts); scenes have a flat noise floor of d·σ² spread over
 * n − 1 directions, which fewer iterations do not separate from a weak lighting component.
 */
const POWER_ITERATIONS = 3;

/**
 * PCA of the frames `subset` (indices into the globally centred frames, centred again on their own
 * mean) that computes only the leading directions: randomized subspace iteration on their Gram
 * operator (`randomizedEigen`; Halko, Martinsson & Tropp 2011), each product G Z = Xᵀ(X Z) being
 * two passes over the frames (`combine`, then `project`), never the n × n matrix itself. The
 * eigen-images are u_j = X Z s_j / √θ_j from the last X Z, so no further pass is needed.
 * `start` (a whole fit) gives a warm start: its Ritz directions' coefficients on the subset.
 */
export function randomizedFit(
  centred: CentredFrames,
  subset: readonly number[],
  norms: Float64Array,
  d: number,
  choice: { components: number | undefined; variance: number; maxComponents: number },
  start: GramFit | undefined,
): GramFit {
  const m = subset.length;
  const n = norms.length;
  const whole = m === n;
  const rank = rankOf(m, d);
  const { components, variance, maxComponents } = choice;
  if (components !== undefined && components > rank) {
    throw new RangeError(`components ${components} is more than the ${rank} independent directions in ${m} learning frames`);
  }
  const wanted = Math.min(components ?? maxComponents, rank);
  // The subset's own mean δ of the c_t (zero, up to rounding, for all the frames).
  const offset = new Float32Array(d);
  let total = 0;
  for (const t of subset) total += norms[t];
  if (!whole && m > 0) {
    const [delta] = centred.combine(subset, new Float64Array(m).fill(1 / m), 1);
    let dd = 0;
    for (let i = 0; i < d; i++) {
      offset[i] = delta[i];
      dd += delta[i] * delta[i];
    }
    total -= m * dd;
  }
  const empty = { offset, basis: new Float32Array(0), eigenvalues: new Float64Array(0), k: 0, keptSum: 0, total: Math.max(total, 0) };
  if (wanted === 0 || rank === 0) return empty;
  let l = Math.min(wanted + OVERSAMPLING, rank);
  let lastImages: Float64Array[] = [];
  const multiply = (block: Float64Array, rows: number) => {
    lastImages = centred.combine(subset, block, rows);
    const y = centred.project(subset, lastImages);
    const out = new Float64Array(rows * m);
    for (let t = 0; t < m; t++) for (let j = 0; j < rows; j++) out[j * m + t] = y[t * rows + j];
    return out;
  };
  let warm: Float64Array | undefined;
  if (start?.coefficients !== undefined && start.block !== undefined) {
    const b = start.block;
    l = Math.min(l, b);
    warm = new Float64Array(l * m);
    for (let j = 0; j < l; j++) for (let t = 0; t < m; t++) warm[j * m + t] = start.coefficients[subset[t] * b + j];
  }
  const ritz = randomizedEigen(multiply, m, {
    block: l,
    iterations: warm === undefined ? POWER_ITERATIONS : 0,
    start: warm,
    centre: !whole,
  });
  const values = ritz.values;
  const tiny = Math.max(values[0], 0) * 1e-10;
  let found = 0;
  while (found < l && values[found] > tiny) found++;
  if (components !== undefined && components > found) {
    throw new RangeError(`components ${components} is more than the ${found} independent directions in ${m} learning frames`);
  }
  let k: number;
  if (components !== undefined) k = components;
  else {
    k = 0;
    let kept = 0;
    while (k < found && k < maxComponents && (total <= 0 || kept / total < variance)) kept += values[k++];
  }
  const eigenvalues = new Float64Array(k);
  let keptSum = 0;
  // Eigen-images u_j = Σ_a (X z_a) S_ja / √θ_j, for the k kept and (whole fits) all `found`.
  const images = whole ? found : k;
  const scaled = new Float64Array(images * l);
  for (let j = 0; j < images; j++) {
    const s = 1 / Math.sqrt(values[j]);
    for (let a = 0; a < l; a++) scaled[j * l + a] = ritz.rotation[j * l + a] * s;
    if (j < k) {
      keptSum += values[j];
      eigenvalues[j] = values[j] / (m - 1);
    }
  }
  const basis = new Float32Array(d * k);
  for (let i = 0, b = 0; i < d; i++) {
    for (let j = 0; j < k; j++, b++) {
      let u = 0;
      for (let a = 0; a < l; a++) u += lastImages[a][i] * scaled[j * l + a];
      basis[b] = u;
    }
  }
  orthonormaliseColumns(basis, d, k);
  let coefficients: Float64Array | undefined;
  if (whole) {
    // y_tj = c_t · u_j = Σ_a (Xᵀ X z_a)_t S_ja / √θ_j: from the last product, no pass over the frames.
    coefficients = new Float64Array(n * found);
    for (let t = 0; t < n; t++) {
      for (let j = 0; j < found; j++) {
        let y = 0;
        for (let a = 0; a < l; a++) y += ritz.product[a * n + t] * scaled[j * l + a];
        coefficients[t * found + j] = y;
      }
    }
  }
  return { offset, basis, eigenvalues, k, keptSum, total: Math.max(total, 0), coefficients, block: whole ? found : undefined };
}
