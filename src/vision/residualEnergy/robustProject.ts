import { chiSquare1Median } from '../frameNoiseScale.ts';
import { quickselect } from '../quickselect.ts';
import { solveSymmetric } from '../solveSymmetric.ts';
import { symmetricTimes } from '../symmetricTimes.ts';
import { Outliers } from './outliers.ts';
import type { Pass } from './pass.ts';
import { residualPass } from './residualPass.ts';
import { samplePass } from './samplePass.ts';

/**
 * Refines y in place by robust steps; `sample` (length ⌈d / scaleStride⌉) holds the noise-scale
 * sample. Returns the last left-out share, and whether the last full pass was made with the
 * final y (then energy, dffs and the normalised sum in `pass` are final).
 */
export function robustProject(
  pass: Pass,
  y: Float64Array,
  steps: number,
  cutoff: number,
  sample: Float32Array,
  gram: Float64Array | undefined,
): { share: number; current: boolean } {
  const { basis, k } = pass;
  const d = pass.z.length;
  // Bᵀ(z − μ) over all pixels: y itself when BᵀB = I, else G y.
  const full = gram === undefined ? Float64Array.from(y) : symmetricTimes(gram, y, k);
  const outliers = new Outliers(basis, k, new Float64Array(k * k), new Float64Array(k), gram);
  let lastCount = -1;
  let share = 0;
  for (let step = 0; step < steps; step++) {
    // The noise scale from the sampled pixels' (r/σ)² (as Float32s), their median taken as the
    // sorted sample's element ⌊n/2⌋ (the upper middle for an even count).
    samplePass(pass, y, sample);
    const scale = Math.max(1, quickselect(sample, sample.length >> 1, { scratch: sample }) / chiSquare1Median);
    const limit = cutoff * cutoff * scale;
    outliers.reset(full);
    const count = residualPass(pass, y, limit, outliers);
    outliers.flush();
    share = count / d;
    // Nothing worth leaving out, or too little left to trust.
    if (share < 0.001 || share > 0.8) return { share, current: true };
    if (!solveSymmetric(outliers.normal, outliers.rhs, k, y)) return { share, current: true };
    if (settled(count, lastCount)) break;
    lastCount = count;
  }
  return { share, current: false };
}

/**
 * Whether a robust step's left-out set has settled: its size within 1 % (inclusive) of the
 * previous step's (never for the first step, whose previous count is −1).
 */
export function settled(count: number, lastCount: number): boolean {
  return lastCount >= 0 && Math.abs(count - lastCount) <= 0.01 * count;
}
