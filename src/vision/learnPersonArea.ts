import { fitPersonArea, type PersonAreaModel, type PersonReference } from './fitPersonArea.ts';
import { repeatedMedianLine } from './repeatedMedianLine.ts';

/** One blob taken for a single person: where its feet were and the area it covered. */
export interface PersonObservation {
  /** Foot row, normalised: 0 top .. 1 bottom. */
  readonly y: number;
  /** Blob area, fraction of the frame area, in (0, 1]. */
  readonly area: number;
}

/** Why no person area could be learned. */
export const LearnPersonAreaFailure = {
  /** Fewer observations (or fewer supporting the fit) than `minObservations`. */
  tooFew: 'too-few',
  /** The supporting observations stand within too narrow a band of rows to fit a slope. */
  rowsNotSpread: 'rows-not-spread',
} as const;
export type LearnPersonAreaFailure = (typeof LearnPersonAreaFailure)[keyof typeof LearnPersonAreaFailure];

/** A person area learned from observations. */
export interface LearnedPersonArea {
  readonly ok: true;
  /** √area = intercept + slope · y, fitted by least squares to the supporting observations. */
  readonly model: PersonAreaModel;
  readonly intercept: number;
  readonly slope: number;
  /** Observations given. */
  readonly observations: number;
  /** Observations that support the fit (|residual| ≤ cutoff × scale); the rest were taken as outliers. */
  readonly supporting: number;
  /** Per observation, in order: 1 when it supports the fit, 0 when it was taken as an outlier. */
  readonly inliers: Uint8Array;
  /** Robust standard deviation of the residuals of √area (1.4826 × their median absolute value). */
  readonly scale: number;
  /** 10th and 90th percentile of the supporting foot rows, normalised: where the fit is well supported. */
  readonly rows: readonly [number, number];
}

/** No person area could be learned, and why. */
export interface PersonAreaNotLearned {
  readonly ok: false;
  readonly reason: LearnPersonAreaFailure;
  /** The reason in words, with the numbers. */
  readonly message: string;
  readonly observations: number;
  /** Observations that supported the last fit tried (0 when none was tried). */
  readonly supporting: number;
}

export interface LearnPersonAreaOptions {
  /** Supporting observations needed (inclusive); whole number ≥ 2, default 30. */
  minObservations?: number;
  /** Spread of the supporting foot rows needed, 10th to 90th percentile, normalised rows (inclusive); default 0.1. */
  minRowSpread?: number;
  /** An observation supports the fit when |residual| ≤ cutoff × scale (inclusive), robust standard deviations; > 0, default 2.5. */
  cutoff?: number;
  /** Most C-steps, and most rounds of reweighting after them; whole number ≥ 1, default 10. */
  maxIterations?: number;
  /** The initial repeated-median line uses at most this many observations, evenly strided (it is O(n²)); whole number ≥ 2, default 256. */
  maxInitialPoints?: number;
  /** Smallest area the returned model gives, fraction of the frame area (fitPersonArea's minimum); default 0.0002. */
  minimum?: number;
}

/** 1 / Φ⁻¹(3/4): makes the median absolute residual a consistent estimate of a normal standard deviation. */
const MAD_TO_SD = 1.4826;

/**
 * Learns how large one person looks depending on the row of their feet, from blobs gathered over
 * time that were each taken for one person standing alone. As in {@link fitPersonArea}, √area is
 * a straight line in the foot row. Some observations are wrong — two people walking close
 * together make one blob of about twice the area, a person half hidden makes a small one — so the
 * line is fitted robustly: least trimmed squares computed by concentration steps, then
 * reweighted least squares with hard rejection (P. J. Rousseeuw, "Least median of squares
 * regression", JASA 79, 1984, for LTS; P. J. Rousseeuw and K. Van Driessen, "Computing LTS
 * regression for large data sets", Data Min. Knowl. Disc. 12, 2006, for the C-steps; P. J.
 * Rousseeuw and A. M. Leroy, *Robust Regression and Outlier Detection*, Wiley 1987, for the
 * reweighting with weights 0/1 at 2.5 robust standard deviations — the cut-off 2.5 and the
 * constant 1.4826 as given there, recalled from memory):
 *
 * 1. start from Siegel's repeated-median line of √area on y ({@link repeatedMedianLine}, 50 %
 *    breakdown point);
 * 2. C-steps: fit least squares to the half of the observations with the smallest residuals
 *    rᵢ = √areaᵢ − (a + b·yᵢ), and repeat while the sum of their squared residuals falls;
 * 3. scale σ = 1.4826 · median |rᵢ| over all observations; those with |rᵢ| ≤ cutoff · σ support
 *    the fit; refit by least squares on them alone (fitPersonArea), and repeat 3 until the
 *    supporting set stays the same.
 *
 * Example: 40 people at rows 0.4..0.95 whose √area is 0.1·y, plus 12 pairs at the same rows
 * covering twice the area each: least squares on all 52 gives √area ≈ 0.110·y − 0.0006, this
 * gives √area = 0.1·y with the 12 pairs taken as outliers.
 */
export function learnPersonArea(
  observations: readonly PersonObservation[],
  options: LearnPersonAreaOptions = {},
): LearnedPersonArea | PersonAreaNotLearned {
  const { minObservations = 30, minRowSpread = 0.1, cutoff = 2.5, maxIterations = 10, maxInitialPoints = 256, minimum = 0.0002 } = options;
  if (!(Number.isInteger(minObservations) && minObservations >= 2)) throw new RangeError(`options.minObservations must be a whole number ≥ 2, got ${minObservations}`);
  if (!(minRowSpread >= 0 && minRowSpread <= 1)) throw new RangeError(`options.minRowSpread must be in 0..1, got ${minRowSpread}`);
  if (!(cutoff > 0 && Number.isFinite(cutoff))) throw new RangeError(`options.cutoff must be a number > 0, got ${cutoff}`);
  if (!(Number.isInteger(maxIterations) && maxIterations >= 1)) throw new RangeError(`options.maxIterations must be a whole number ≥ 1, got ${maxIterations}`);
  if (!(Number.isInteger(maxInitialPoints) && maxInitialPoints >= 2)) throw new RangeError(`options.maxInitialPoints must be a whole number ≥ 2, got ${maxInitialPoints}`);
  const n = observations.length;
  const ys = new Float64Array(n);
  const roots = new Float64Array(n);
  observations.forEach((o, i) => {
    if (!(o.y >= 0 && o.y <= 1)) throw new RangeError(`observations[${i}].y must be the foot row in 0..1, got ${o.y}`);
    if (!(o.area > 0 && o.area <= 1)) throw new RangeError(`observations[${i}].area must be a fraction of the frame area in (0, 1], got ${o.area}`);
    ys[i] = o.y;
    roots[i] = Math.sqrt(o.area);
  });
  const fail = (reason: LearnPersonAreaFailure, message: string, supporting = 0): PersonAreaNotLearned => ({ ok: false, reason, message, observations: n, supporting });
  if (n < minObservations) return fail(LearnPersonAreaFailure.tooFew, `${n} people seen alone so far; ${minObservations} are needed`);

  const start = repeatedMedianLine({ x: ys, y: roots }, { maxPoints: maxInitialPoints });
  if (!start) return fail(LearnPersonAreaFailure.rowsNotSpread, 'every person seen alone stood at the same row; people at different distances are needed');
  let intercept = start.intercept;
  let slope = start.slope;
  const inliers = new Uint8Array(n);
  const residuals = new Float64Array(n);

  // C-steps of least trimmed squares over the half with the smallest residuals.
  const half = Math.max(2, Math.ceil(n / 2));
  const order = new Uint32Array(n);
  let trimmed = Infinity;
  for (let round = 0; round < maxIterations; round++) {
    for (let i = 0; i < n; i++) {
      residuals[i] = roots[i] - (intercept + slope * ys[i]);
      order[i] = i;
    }
    order.sort((a, b) => Math.abs(residuals[a]) - Math.abs(residuals[b]));
    let sum = 0;
    for (let k = 0; k < half; k++) sum += residuals[order[k]] ** 2;
    if (!(sum < trimmed)) break;
    trimmed = sum;
    const subset: PersonReference[] = [];
    for (let k = 0; k < half; k++) subset.push(observations[order[k]]);
    if (subset.every((r) => r.y === subset[0].y)) break;
    const step = fitPersonArea(subset, { minimum });
    intercept = step.intercept;
    slope = step.slope;
  }

  let supporting = -1;
  let scale = 0;
  let model: PersonAreaModel | undefined;
  for (let round = 0; round < maxIterations; round++) {
    for (let i = 0; i < n; i++) residuals[i] = Math.abs(roots[i] - (intercept + slope * ys[i]));
    scale = Math.max(1e-9, MAD_TO_SD * median(Float64Array.from(residuals)));
    let changed = false;
    let count = 0;
    for (let i = 0; i < n; i++) {
      const keep = residuals[i] <= cutoff * scale ? 1 : 0;
      if (keep !== inliers[i]) changed = true;
      inliers[i] = keep;
      count += keep;
    }
    supporting = count;
    if (!changed && model) break;
    const references: PersonReference[] = [];
    for (let i = 0; i < n; i++) if (inliers[i]) references.push(observations[i]);
    if (count < 2 || references.every((r) => r.y === references[0].y)) {
      return fail(LearnPersonAreaFailure.rowsNotSpread, `the ${count} people that agree with each other all stood at the same row; people at different distances are needed`, count);
    }
    model = fitPersonArea(references, { minimum });
    intercept = model.intercept;
    slope = model.slope;
  }
  if (!model) throw new Error('unreachable: at least one round fits a model');
  if (supporting < minObservations) {
    return fail(LearnPersonAreaFailure.tooFew, `only ${supporting} of ${n} people seen alone agree on one size; ${minObservations} are needed`, supporting);
  }
  const rowsKept = new Float64Array(supporting);
  for (let i = 0, k = 0; i < n; i++) if (inliers[i]) rowsKept[k++] = ys[i];
  rowsKept.sort();
  const rows = [percentile(rowsKept, 0.1), percentile(rowsKept, 0.9)] as const;
  if (rows[1] - rows[0] < minRowSpread) {
    return fail(
      LearnPersonAreaFailure.rowsNotSpread,
      `the people seen alone stood within rows ${rows[0].toFixed(2)}–${rows[1].toFixed(2)} (10th–90th percentile); a spread of ${minRowSpread} is needed to see how size changes with distance`,
      supporting,
    );
  }
  return { ok: true, model, intercept, slope, observations: n, supporting, inliers, scale, rows };
}

/** Median of `values` (reordered in place). */
function median(values: Float64Array): number {
  values.sort();
  const h = values.length >> 1;
  return values.length % 2 === 1 ? values[h] : (values[h - 1] + values[h]) / 2;
}

/** The q-quantile of sorted values, linear between closest ranks (NumPy's default "linear" method). */
function percentile(sorted: Float64Array, q: number): number {
  const at = q * (sorted.length - 1);
  const lo = Math.floor(at);
  const hi = Math.min(sorted.length - 1, lo + 1);
  return sorted[lo] + (sorted[hi] - sorted[lo]) * (at - lo);
}
