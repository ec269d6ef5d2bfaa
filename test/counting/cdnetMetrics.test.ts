import { describe, expect, it } from 'vitest';
import { addConfusion, cdnetMetrics } from '../../src/counting/cdnetMetrics.ts';

describe('CDnet metrics', () => {
  it('follow the published formulas on a hand-computed confusion matrix', () => {
    // check: Goyette et al. 2012 (changedetection.net), metric definitions; values computed by hand.
    const m = cdnetMetrics({ tp: 80, fp: 20, tn: 890, fn: 10 });
    expect(m.recall).toBeCloseTo(80 / 90, 12);
    expect(m.specificity).toBeCloseTo(890 / 910, 12);
    expect(m.fpr).toBeCloseTo(20 / 910, 12);
    expect(m.fnr).toBeCloseTo(10 / 90, 12);
    expect(m.pwc).toBeCloseTo(3, 12);
    expect(m.precision).toBeCloseTo(0.8, 12);
    expect(m.fMeasure).toBeCloseTo((2 * 0.8 * (8 / 9)) / (0.8 + 8 / 9), 12);
    expect(m.recall + m.fnr).toBeCloseTo(1, 12);
    expect(m.specificity + m.fpr).toBeCloseTo(1, 12);
  });

  it('gives NaN where a ratio has no denominator', () => {
    const m = cdnetMetrics({ tp: 0, fp: 0, tn: 100, fn: 0 });
    expect(m.recall).toBeNaN();
    expect(m.precision).toBeNaN();
    expect(m.pwc).toBe(0);
  });

  it('scores CDnet labels: shadows are background, outside-ROI and unknown are skipped', () => {
    // check: CDnet ground-truth grey levels 0/50/85/170/255 (Goyette et al. 2012; recalled from memory)
    const truth = Uint8Array.of(255, 255, 0, 50, 85, 170, 0);
    const detected = Uint8Array.of(1, 0, 0, 1, 1, 1, 1);
    expect(addConfusion(detected, truth, { tp: 0, fp: 0, tn: 0, fn: 0 })).toEqual({ tp: 1, fn: 1, tn: 1, fp: 2 });
    expect(addConfusion(Uint8Array.of(1, 0), Uint8Array.of(1, 1), { tp: 0, fp: 0, tn: 0, fn: 0 })).toEqual({ tp: 1, fn: 1, tn: 0, fp: 0 });
  });
});
