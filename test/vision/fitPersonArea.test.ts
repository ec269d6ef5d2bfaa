import { describe, expect, it } from 'vitest';
import { fitPersonArea } from '../../src/vision/fitPersonArea.ts';

describe('fitPersonArea', () => {
  it('passes exactly through two references with area growing as the square of the foot row', () => {
    const model = fitPersonArea([{ y: 0.5, area: 0.004 }, { y: 1, area: 0.016 }]);
    expect(model.areaAt(0.5)).toBeCloseTo(0.004, 10);
    expect(model.areaAt(1)).toBeCloseTo(0.016, 10);
    expect(model.areaAt(0.75)).toBeCloseTo(0.009, 10);
  });

  it('matches a pinhole camera over a floor: image height proportional to the distance from the horizon', () => {
    // check: pinhole projection of an upright person of height H on a ground plane (common practice):
    // image height h = f·H/Z and foot row v − v_h = f·C/Z for a camera at height C, so h ∝ (v − v_h).
    const horizon = 0.2;
    const people = [0.35, 0.5, 0.7, 0.9].map((y) => ({ y, area: 0.05 * ((y - horizon) * 0.6) ** 2 }));
    const model = fitPersonArea(people);
    expect(model.areaAt(0.6)).toBeCloseTo(0.05 * (0.4 * 0.6) ** 2, 10);
    expect(-model.intercept / model.slope).toBeCloseTo(horizon, 10);
  });

  it('fits noisy references by least squares and never returns less than the minimum', () => {
    const model = fitPersonArea([{ y: 0.4, area: 0.003 }, { y: 0.6, area: 0.0065 }, { y: 0.8, area: 0.0115 }], { minimum: 0.001 });
    expect(model.areaAt(0.6)).toBeGreaterThan(0.006);
    expect(model.areaAt(0.6)).toBeLessThan(0.0075);
    expect(model.areaAt(0)).toBe(0.001);
    expect(() => fitPersonArea([{ y: 0.5, area: 0.01 }])).toThrow(/at least 2/);
    expect(() => fitPersonArea([{ y: 0.5, area: 0.01 }, { y: 0.5, area: 0.02 }])).toThrow(/different heights/);
  });
});
