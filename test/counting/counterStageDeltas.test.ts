import { describe, expect, it } from 'vitest';
import { counterStageDeltas } from '../../src/counting/counterStageDeltas.ts';
import { COUNTER_STAGES } from '../../src/counting/createMaskCounter.ts';

describe('counterStageDeltas', () => {
  it('gives the milliseconds added since the previous read, as seconds, named by COUNTER_STAGES', () => {
    const previous = Float64Array.of(1, 1, 1, 0, 0, 0);
    const now = Float64Array.of(3, 1, 2.5, 0.25, 4, 0);
    expect(counterStageDeltas(now, previous)).toEqual([
      ['residual', 0.002],
      ['noise_scale', 0],
      ['threshold', 0.0015],
      ['morphology', 0.00025],
      ['labelling', 0.004],
      ['zones', 0],
    ]);
    expect(Array.from(previous)).toEqual([1, 1, 1, 0, 0, 0]); // inputs unchanged
    expect(COUNTER_STAGES).toHaveLength(6);
  });

  it('takes all of a sum that was zeroed meanwhile, and everything on the first read', () => {
    expect(counterStageDeltas(Float64Array.of(2, 0, 0, 0, 0, 0), Float64Array.of(5, 0, 0, 0, 0, 0))[0]).toEqual(['residual', 0.002]);
    expect(counterStageDeltas(Float64Array.of(7, 0, 0, 0, 0, 0), undefined)[0]).toEqual(['residual', 0.007]);
  });

  it('leaves out what is not a finite number of milliseconds', () => {
    expect(counterStageDeltas(Float64Array.of(NaN, Infinity, 1, 0, 0, 0), undefined).map(([s]) => s)).toEqual(['threshold', 'morphology', 'labelling', 'zones']);
  });
});
