import { COUNTER_STAGES } from './createMaskCounter.ts';

/**
 * The seconds each of the counter's stages took since the sums were last read: a counter made
 * with `timeStages: true` adds every stage's milliseconds to its `stageTimes` (indexed as
 * COUNTER_STAGES: residual, noise_scale, threshold, morphology, labelling, zones); given those
 * sums now and as they were at the previous read (`previous`, undefined for a counter read for
 * the first time), this gives [stage, seconds] pairs for `residuum_stage_seconds`. A sum below
 * its previous value was zeroed meanwhile, so all of it is new. Entries that are not finite or
 * come out negative are left out. Neither array is changed; keep a copy of `stageTimes` as the
 * next `previous`.
 *
 * ```ts
 * counterStageDeltas(Float64Array.of(3, 1, 2, 0, 0, 0), Float64Array.of(1, 1, 1, 0, 0, 0));
 * // [['residual', 0.002], ['noise_scale', 0], ['threshold', 0.001], ['morphology', 0], …]
 * ```
 */
export function counterStageDeltas(stageTimes: Float64Array, previous: Float64Array | undefined): [(typeof COUNTER_STAGES)[number], number][] {
  const out: [(typeof COUNTER_STAGES)[number], number][] = [];
  const n = Math.min(stageTimes.length, COUNTER_STAGES.length);
  for (let i = 0; i < n; i++) {
    const before = previous?.[i] ?? 0;
    const ms = stageTimes[i] >= before ? stageTimes[i] - before : stageTimes[i];
    if (Number.isFinite(ms) && ms >= 0) out.push([COUNTER_STAGES[i], ms / 1000]);
  }
  return out;
}
