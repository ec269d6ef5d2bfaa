/** A straight line y = intercept + slope · x. */
export interface Line {
  readonly intercept: number;
  readonly slope: number;
}

/** Points of a plane as two equally long coordinate lists. */
export interface LinePoints {
  readonly x: ArrayLike<number>;
  readonly y: ArrayLike<number>;
}

export interface RepeatedMedianLineOptions {
  /**
   * Fit on at most this many points, taken at an even stride through the list (the method makes
   * n² slopes); whole number ≥ 2, default: all points.
   */
  maxPoints?: number;
}

/**
 * Siegel's repeated-median line (A. F. Siegel, "Robust regression using repeated medians",
 * Biometrika 69(1), 1982): for each point i, the median of the slopes from i to every other point
 * with a different x; the slope is the median of those n medians, and the intercept the median
 * of yᵢ − slope · xᵢ (the "hierarchical" intercept). Its breakdown point is 50 %: almost half
 * the points can be anywhere without carrying the line away, where one far point moves a
 * least-squares line as far as it likes. Pairs with equal x give no slope and are skipped; a
 * median of an even count is the mean of the two middle values.
 *
 * Example: points (0, 0), (1, 1), (2, 2), (3, 3), (4, 40) give slope 1 and intercept 0, where
 * least squares gives slope 8.2 and intercept −7.2.
 *
 * Returns undefined when no two points differ in x (no line can be fitted).
 */
export function repeatedMedianLine(points: LinePoints, options: RepeatedMedianLineOptions = {}): Line | undefined {
  const { maxPoints = Infinity } = options;
  const total = points.x.length;
  if (points.y.length !== total) throw new RangeError(`points.x has ${total} values but points.y has ${points.y.length}`);
  if (!(maxPoints >= 2 && (maxPoints === Infinity || Number.isInteger(maxPoints)))) {
    throw new RangeError(`options.maxPoints must be a whole number ≥ 2, got ${maxPoints}`);
  }
  const n = Math.min(total, maxPoints);
  const xs = new Float64Array(n);
  const ys = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const i = n === total ? k : Math.floor((k * total) / n);
    xs[k] = points.x[i];
    ys[k] = points.y[i];
    if (!Number.isFinite(xs[k]) || !Number.isFinite(ys[k])) throw new RangeError(`points[${i}] must be finite, got (${xs[k]}, ${ys[k]})`);
  }
  const slopes = new Float64Array(n);
  const medians = new Float64Array(n);
  let m = 0;
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) {
      const dx = xs[j] - xs[i];
      if (j !== i && dx !== 0) slopes[s++] = (ys[j] - ys[i]) / dx;
    }
    if (s > 0) medians[m++] = median(slopes.subarray(0, s));
  }
  if (m === 0) return undefined;
  const slope = median(medians.subarray(0, m));
  for (let i = 0; i < n; i++) medians[i] = ys[i] - slope * xs[i];
  return { intercept: median(medians.subarray(0, n)), slope };
}

/** Median of `values` (reordered in place). */
function median(values: Float64Array): number {
  values.sort();
  const h = values.length >> 1;
  return values.length % 2 === 1 ? values[h] : (values[h - 1] + values[h]) / 2;
}
