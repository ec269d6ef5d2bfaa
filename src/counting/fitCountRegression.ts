import { solveSymmetric } from '../vision/solveSymmetric.ts';

/**
 * What the count regression of a room zone sees in one frame: the count by the blob rule and
 * perspective-normalised foreground features (measureZoneForeground), in this order.
 */
export const COUNT_FEATURES = ['rule', 'area', 'edge', 'blobs'] as const;
export type CountFeatures = readonly [rule: number, area: number, edge: number, blobs: number];

/** One "there are N people in this zone now": the features of that moment and the count given. */
export interface CalibrationPoint {
  readonly features: CountFeatures;
  /** People in the zone, as the user counted them: a whole number ≥ 0. */
  readonly count: number;
}

/** A fitted linear count regression on standardised features. Numbers only. */
export interface CountRegression {
  readonly mean: readonly number[];
  readonly scale: readonly number[];
  readonly weights: readonly number[];
  readonly intercept: number;
  /** Ridge penalty chosen by leave-one-out error. */
  readonly lambda: number;
}

/** A zone's regression and how it fares against the blob rule on the same points. */
export interface CountRegressionFit {
  readonly points: number;
  /** The regression, or undefined when the points cannot support one (see `reason`). */
  readonly regression?: CountRegression;
  /** Mean absolute error of the regression's whole-number counts, each point left out of its own fit in turn. */
  readonly leaveOneOutError: number;
  /** Mean absolute error of the blob rule's counts at the same points. */
  readonly ruleError: number;
  /** Whether the regression counts the zone: it has one, and it beat the blob rule. */
  readonly use: boolean;
  /** Why there is no regression, in words. */
  readonly reason?: string;
}

export interface FitCountRegressionOptions {
  /** Fewest points for a regression; default 5. */
  minPoints?: number;
  /** Ridge penalties tried (on standardised features); default 0.03 … 30. */
  lambdas?: readonly number[];
}

/**
 * Fits a zone's count regression from a handful of counts a user gave: ridge regression of the
 * count on the standardised features (the intercept is not penalised), the penalty chosen from a
 * short list by the leave-one-out error. With as few as five points a linear model on four
 * features is what the data can carry; Chan, Liang & Vasconcelos (2008) regress crowd counts on
 * the same kind of perspective-normalised segment features (they use Gaussian-process regression
 * with hundreds of training frames).
 *
 * The leave-one-out residual of a ridge fit is exact without refitting: e_i / (1 − h_ii), h the
 * hat matrix (the PRESS residual, Allen 1974; for ridge, Golub, Heath & Wahba 1979). The features
 * are standardised over all points (no counts are used for that, so nothing of the left-out
 * count leaks). The error reported is that of the penalty chosen, so it is slightly optimistic
 * with very few points.
 */
export function fitCountRegression(points: readonly CalibrationPoint[], options: FitCountRegressionOptions = {}): CountRegressionFit {
  const { minPoints = 5, lambdas = [0.03, 0.1, 0.3, 1, 3, 10, 30] } = options;
  for (const [i, point] of points.entries()) {
    if (!(Number.isInteger(point.count) && point.count >= 0)) throw new RangeError(`points[${i}].count must be a whole number ≥ 0, got ${point.count}`);
    if (point.features.length !== COUNT_FEATURES.length || !point.features.every(Number.isFinite)) {
      throw new RangeError(`points[${i}].features must be ${COUNT_FEATURES.length} finite numbers (${COUNT_FEATURES.join(', ')})`);
    }
  }
  const n = points.length;
  const ruleError = n === 0 ? NaN : points.reduce((s, p) => s + Math.abs(p.features[0] - p.count), 0) / n;
  const none = (reason: string): CountRegressionFit => ({ points: n, leaveOneOutError: NaN, ruleError, use: false, reason });
  if (n < minPoints) return none(`needs at least ${minPoints} counts, ${n} given`);
  if (new Set(points.map((p) => p.count)).size < 2) return none('needs counts that differ (all given counts are the same)');

  const p = COUNT_FEATURES.length;
  const mean = new Array<number>(p).fill(0);
  const scale = new Array<number>(p).fill(0);
  for (const point of points) for (let j = 0; j < p; j++) mean[j] += point.features[j] / n;
  for (const point of points) for (let j = 0; j < p; j++) scale[j] += (point.features[j] - mean[j]) ** 2 / n;
  for (let j = 0; j < p; j++) scale[j] = scale[j] > 1e-12 ? Math.sqrt(scale[j]) : 1;
  // Rows [1, z_1 … z_p], z standardised.
  const rows = points.map((point) => [1, ...point.features.map((f, j) => (f - mean[j]) / scale[j])]);
  const y = points.map((point) => point.count);

  let best: { lambda: number; coefficients: Float64Array; looRaw: number; looRounded: number } | undefined;
  for (const lambda of lambdas) {
    const solved = ridge(rows, y, lambda);
    if (solved === undefined) continue;
    let looRaw = 0;
    let looRounded = 0;
    for (let i = 0; i < n; i++) {
      const fitted = dot(solved.coefficients, rows[i]);
      const leverage = dot(rows[i], solved.solve(rows[i]));
      // A point of leverage 1 decides its own fit: left out, nothing predicts it.
      const left = leverage < 1 - 1e-9 ? y[i] - (y[i] - fitted) / (1 - leverage) : 0;
      looRaw += Math.abs(left - y[i]) / n;
      looRounded += Math.abs(wholeCount(left) - y[i]) / n;
    }
    // Ties go to the larger penalty (the simpler model): strictly smaller errors only.
    if (best === undefined || looRaw < best.looRaw - 1e-12) best = { lambda, coefficients: solved.coefficients, looRaw, looRounded };
  }
  if (best === undefined) return none('the counts given do not support a regression');
  const regression: CountRegression = { mean, scale, weights: Array.from(best.coefficients.subarray(1)), intercept: best.coefficients[0], lambda: best.lambda };
  return { points: n, regression, leaveOneOutError: best.looRounded, ruleError, use: best.looRounded < ruleError };
}

/** The regression's count for a zone's features: a whole number ≥ 0. */
export function predictCount(regression: CountRegression, features: CountFeatures): number {
  let value = regression.intercept;
  for (let j = 0; j < regression.weights.length; j++) value += (regression.weights[j] * (features[j] - regression.mean[j])) / regression.scale[j];
  return wholeCount(value);
}

function wholeCount(value: number): number {
  return Math.max(0, Math.round(value));
}

function dot(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}

/** Ridge coefficients [intercept, w…] with the intercept unpenalised, and a solver of the same normal matrix. */
function ridge(rows: readonly number[][], y: readonly number[], lambda: number) {
  const k = rows[0].length;
  const normal = new Float64Array(k * k);
  const rhs = new Float64Array(k);
  for (let i = 0; i < rows.length; i++) {
    const row = rows[i];
    for (let a = 0; a < k; a++) {
      rhs[a] += row[a] * y[i];
      for (let b = 0; b <= a; b++) normal[a * k + b] += row[a] * row[b];
    }
  }
  for (let a = 1; a < k; a++) normal[a * k + a] += lambda;
  const solve = (b: ArrayLike<number>): Float64Array => {
    const x = new Float64Array(k);
    if (!solveSymmetric(normal, Float64Array.from(b), k, x)) throw new Error('count regression: normal matrix not positive definite');
    return x;
  };
  const coefficients = new Float64Array(k);
  if (!solveSymmetric(normal, rhs, k, coefficients)) return undefined;
  return { coefficients, solve };
}
