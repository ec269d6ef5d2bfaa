import type { Subspace } from '../subspace.ts';
import { learningKernels } from '../learningKernels.ts';
import { centredFrames } from './centredFrames.ts';
import { fitFromGram } from './fitFromGram.ts';
import { type GramFit, rankOf } from './gramFit.ts';
import { OVERSAMPLING, randomizedFit } from './randomizedFit.ts';
import { spreadMax } from './spreadMax.ts';

/** Frames per block when splitting the learning frames into two interleaved halves. */
const foldBlock = 8;

/** One plain fit of mean, eigen-images and noise map. */
export function plainFit(
  frames: readonly Float32Array[],
  d: number,
  size: { width: number; height: number },
  choice: { components: number | undefined; variance: number; maxComponents: number; randomized: boolean },
  noiseEstimate: 'cross-validated' | 'training',
  noiseFloor: number,
  noiseSpread: number,
): Subspace {
  const n = frames.length;
  const wanted = Math.min(choice.components ?? choice.maxComponents, rankOf(n, d));
  // A combine call asks for at most k eigen-images and a mean (k ≤ rank ≤ n − 1), or for the
  // randomized method's block of wanted + OVERSAMPLING directions.
  const maxRows = choice.randomized ? Math.max(wanted + OVERSAMPLING, wanted + 1) : wanted + 1;
  const centred = learningKernels(frames, d, { maxRows }) ?? centredFrames(frames, d);
  const { mean } = centred;
  const all = Array.from({ length: n }, (_, t) => t);
  let fit: GramFit;
  let half: (train: number[]) => GramFit;
  if (choice.randomized) {
    const norms = centred.squaredNorms();
    fit = randomizedFit(centred, all, norms, d, choice, undefined);
    const whole = fit;
    // The halves start from the whole fit's directions (a warm start: each half's eigen-images are
    // still combinations of its own frames only) and need no iteration of their own.
    half = (train) => randomizedFit(centred, train, norms, d, { components: undefined, variance: 1, maxComponents: whole.k }, whole);
  } else {
    const gram = centred.gram();
    fit = fitFromGram(gram, n, all, centred, d, choice);
    half = (train) => fitFromGram(gram, n, train, centred, d, { components: undefined, variance: 1, maxComponents: fit.k });
  }
  const { basis, k, keptSum, total } = fit;

  const sumSq = new Float64Array(d);
  let divisor: number;
  if (noiseEstimate === 'cross-validated' && n >= 4) {
    // Two-fold cross-validation over interleaved blocks of frames: each half is explained by a
    // subspace fitted to the other half, so the noise level is what the model leaves on frames it
    // has not seen, not the smaller residual of the frames it was fitted to.
    let folds = [0, 1].map((f) => all.filter((t) => Math.floor(t / foldBlock) % 2 === f));
    if (folds[1].length === 0) folds = [all.filter((t) => t % 2 === 0), all.filter((t) => t % 2 === 1)];
    for (let f = 0; f < 2; f++) {
      const train = folds[1 - f];
      const { offset, basis: halfBasis, k: halfK } = half(train);
      centred.addResidualSquares(folds[f], offset, halfBasis, halfK, sumSq);
    }
    divisor = n;
  } else {
    centred.addResidualSquares(all, new Float32Array(d), basis, k, sumSq);
    // Residual degrees of freedom n − 1 − k, as in least-squares regression.
    divisor = Math.max(1, n - 1 - k);
  }
  const noise = spreadMax(sumSq, divisor, noiseFloor, size, noiseSpread);
  const retainedVariance = total > 0 ? keptSum / total : 1;
  const residualVariance = d > k ? (total - keptSum) / (n - 1) / (d - k) : 0;
  return {
    width: size.width,
    height: size.height,
    components: k,
    mean,
    basis,
    eigenvalues: fit.eigenvalues,
    totalVariance: total / (n - 1),
    retainedVariance,
    residualVariance: Math.max(residualVariance, 0),
    noise,
    frameCount: n,
  };
}
