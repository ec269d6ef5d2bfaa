import { Matrix, solve } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { fitCountRegression, predictCount, type CalibrationPoint, type CountFeatures } from '../../src/counting/fitCountRegression.ts';
import { mulberry } from '../helpers/random.ts';

/** Points whose count follows the area feature, with the blob rule undercounting crowds (as merged groups do). */
function crowdPoints(n: number, seed: number): CalibrationPoint[] {
  const random = mulberry(seed);
  return Array.from({ length: n }, () => {
    const people = Math.floor(random() * 9);
    const area = people * (0.9 + 0.2 * random());
    const edge = people * 4 * (0.8 + 0.4 * random());
    const blobs = Math.max(0, people - Math.floor(people / 3));
    const rule = Math.max(0, people - Math.floor(people / 2));
    return { features: [rule, area, edge, blobs] as CountFeatures, count: people };
  });
}

describe('fitCountRegression', () => {
  it('fits the ridge solution and its leave-one-out error as a refit without each point would', () => {
    const points = crowdPoints(9, 3);
    const fit = fitCountRegression(points, { lambdas: [1] });
    expect(fit.regression).toBeDefined();
    const { mean, scale } = fit.regression!;
    const rows = points.map((p) => [1, ...p.features.map((f, j) => (f - mean[j]) / scale[j])]);
    const y = points.map((p) => p.count);
    // check: ml-matrix (general-purpose linear algebra) solves the penalised normal equations
    // (XᵀX + diag(0, λ, …, λ)) β = Xᵀy on the same standardised rows.
    const reference = (use: number[][], target: number[]) => {
      const x = new Matrix(use);
      const normal = x.transpose().mmul(x);
      for (let j = 1; j < normal.columns; j++) normal.set(j, j, normal.get(j, j) + 1);
      return solve(normal, x.transpose().mmul(Matrix.columnVector(target))).to1DArray();
    };
    const beta = reference(rows, y);
    expect(fit.regression!.intercept).toBeCloseTo(beta[0], 9);
    fit.regression!.weights.forEach((w, j) => expect(w).toBeCloseTo(beta[j + 1], 9));
    // check: leave-one-out by its definition: refit on the other points (ml-matrix) and count the
    // left-out one, rounded to a whole person as the zone reports it.
    let error = 0;
    for (let i = 0; i < points.length; i++) {
      const b = reference(rows.filter((_, r) => r !== i), y.filter((_, r) => r !== i));
      const predicted = rows[i].reduce((s, v, j) => s + v * b[j], 0);
      error += Math.abs(Math.max(0, Math.round(predicted)) - y[i]) / points.length;
    }
    expect(fit.leaveOneOutError).toBeCloseTo(error, 9);
  });

  it('is used where the blob rule undercounts crowds, and counts them', () => {
    const fit = fitCountRegression(crowdPoints(12, 7));
    expect(fit.ruleError).toBeGreaterThan(1);
    expect(fit.use).toBe(true);
    expect(fit.leaveOneOutError).toBeLessThan(fit.ruleError / 2);
    for (const point of crowdPoints(30, 99)) expect(Math.abs(predictCount(fit.regression!, point.features) - point.count)).toBeLessThanOrEqual(1);
  });

  it('is not used where the blob rule already counts right', () => {
    const points = crowdPoints(10, 5).map((p) => ({ ...p, features: [p.count, ...p.features.slice(1)] as unknown as CountFeatures }));
    const fit = fitCountRegression(points);
    expect(fit.ruleError).toBe(0);
    expect(fit.use).toBe(false);
  });

  it('needs enough counts, and counts that differ', () => {
    expect(fitCountRegression(crowdPoints(4, 1))).toMatchObject({ use: false, reason: 'needs at least 5 counts, 4 given' });
    const same = crowdPoints(6, 1).map((p) => ({ ...p, count: 2 }));
    expect(fitCountRegression(same)).toMatchObject({ use: false, reason: expect.stringMatching(/counts that differ/) });
  });

  it('names the point and field of bad input', () => {
    const points = crowdPoints(6, 1);
    expect(() => fitCountRegression([...points, { features: [1, 1, 1, 1], count: 1.5 }])).toThrow(/points\[6\]\.count must be a whole number/);
    expect(() => fitCountRegression([{ features: [1, Number.NaN, 1, 1], count: 1 }])).toThrow(/points\[0\]\.features/);
  });
});
