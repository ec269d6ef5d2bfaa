import type { Subspace } from './subspace.ts';
import { MAX_KERNEL_COMPONENTS } from './countingKernels.ts';
import { imputeOutliers, type LearningActivity } from './fitSubspace/imputeOutliers.ts';
import { plainFit } from './fitSubspace/plainFit.ts';
import { temporalMedian } from './fitSubspace/temporalMedian.ts';

export interface FitSubspaceOptions {
  /**
   * Number of eigen-images to keep, 0 to MAX_KERNEL_COMPONENTS (24, the most the counter takes);
   * when set, `variance` is ignored. 0 keeps only the mean.
   */
  components?: number;
  /** Smallest share of the learning frames' variance to retain, in (0, 1]; default 0.95. */
  variance?: number;
  /** Upper bound on the number of components chosen by `variance`, 0 to 24; default 12. */
  maxComponents?: number;
  /** Lowest per-pixel noise level, in grey levels (inclusive); default 1.5. */
  noiseFloor?: number;
  /**
   * How the per-pixel noise level is estimated: `'cross-validated'` (default) from frames the
   * subspace was not fitted to, `'training'` from the learning frames' own residuals.
   */
  noiseEstimate?: 'cross-validated' | 'training';
  /**
   * Radius in pixels of the neighbourhood whose largest noise level each pixel takes (0 = none);
   * default 2. A textured edge that sways by a pixel or two (leaves, a curtain) then stays quiet;
   * static texture keeps its low noise level, since the largest of low levels is low.
   */
  noiseSpread?: number;
  /**
   * Robust refits for learning frames in which people pass through (0 = plain PCA); default 0.
   * Each refit replaces the pixels whose residual exceeds `robustCutoff` noise units by the
   * model's reconstruction and fits again.
   */
  robustIterations?: number;
  /** Residual, in noise units, beyond which a learning pixel is taken as foreground; default 3. */
  robustCutoff?: number;
  /**
   * How the eigen-images are found: `'snapshots'` (the full eigendecomposition of the n × n Gram
   * matrix), `'randomized'` (only the components kept, by randomized subspace iteration), or
   * `'auto'` (default): snapshots below `RANDOMIZED_FROM` frames (where they are cheaper and
   * exact), randomized from there on.
   */
  decomposition?: 'auto' | 'snapshots' | 'randomized';
}

/**
 * From this many learning frames on, `decomposition: 'auto'` takes the randomized method: its
 * cost grows as n·d·l (l = kept components + OVERSAMPLING), the Gram matrix's as n²·d/2 plus an
 * n³ eigendecomposition; at 320×240 and 12 components the two cost about the same near 300
 * frames (measured: 1.0 and 1.1 s of CPU), and below that the snapshots are exact as well.
 */
export const RANDOMIZED_FROM = 320;

/** A fitted subspace and, with robust learning, how much of the learning frames it rejected. */
export interface SubspaceFit extends Subspace, LearningActivity {}

/**
 * Learns the empty-scene subspace from frames of an empty scene (eigenbackground:
 * Oliver, Rosario & Pentland 2000).
 *
 * PCA by the method of snapshots (Sirovich 1987; Turk & Pentland 1991): with X the d×n matrix of
 * centred frames, the n×n Gram matrix G = XᵀX has the same non-zero eigenvalues as XXᵀ, and an
 * eigenvector v of G maps to the unit eigen-image u = Xv / √λ. Only an n×n eigenproblem is solved,
 * however many pixels a frame has. Covariance eigenvalues are λ / (n − 1).
 *
 * The per-pixel noise level σ_i is the root mean square residual that the model leaves on frames
 * it was not fitted to: two-fold cross-validation over interleaved blocks of 8 frames (the
 * training residual of a subspace fitted to few frames is far smaller than what it leaves on new
 * frames, and thresholds built on it fire everywhere). Each σ_i then takes the largest level
 * within `noiseSpread` pixels and is floored at `noiseFloor`, so that clipped or flat pixels do
 * not become infinitely sensitive.
 *
 * Robust learning (`robustIterations` > 0), for rooms that are never quite empty: fit, take the
 * pixels whose residual is an outlier (beyond `robustCutoff` noise units) as foreground, replace
 * them by the model's reconstruction and fit again — robust subspace learning with 0/1 weights,
 * an iteratively reweighted scheme in the spirit of De la Torre & Black (2003), where each refit
 * is the least-squares fit with the outlying pixels imputed (the EM view of PCA with missing
 * values). As long as each pixel shows the background in most frames, people passing through
 * are rejected and the empty scene remains.
 *
 * Cost, snapshots (`decomposition: 'snapshots'`, and 'auto' below RANDOMIZED_FROM frames): one
 * Gram matrix per fit (n² d / 2 multiply-adds, tiled so that each loaded pixel serves several
 * products) and a full n × n eigendecomposition; the two cross-validation halves are derived
 * from the full Gram matrix by double centring, without touching the pixels again.
 * Randomized (from RANDOMIZED_FROM frames on): only the l = k + OVERSAMPLING leading directions,
 * by randomized subspace iteration on the Gram operator (Halko, Martinsson & Tropp 2011; see
 * `randomizedFit`), 2 (POWER_ITERATIONS + 1) passes over the frames with l directions each, the
 * halves one more pass each from the whole fit's directions: cost n·d·l per pass, linear in n.
 * Directions ahead of a gap in the spectrum come out as the full decomposition's (test: within
 * 5e-3 rad and 2e-4 in eigenvalue); directions in the flat noise floor are interchangeable and
 * differ, with the same noise map within 2 %. The pixel passes (centring, Gram matrix,
 * eigen-images, residual squares) run in WebAssembly SIMD kernels on one copy of the frames
 * (`learningKernels`, f32 lanes, long sums added in f64) and in the JS loops of `centredFrames` (f64 sums)
 * where WebAssembly SIMD is missing; the two give the same model within the tolerances stated
 * there (eigen-images within 1e-3 rad of principal angle, noise levels within 1e-4 relative).
 *
 * Example: ten 2-pixel "frames" (x, y) from the classic PCA tutorial data set give eigenvalues
 * 1.284 and 0.049 (see test/vision/fitSubspace.test.ts).
 *
 * @param frames n ≥ 2 pixel vectors of equal length d (e.g. GreyFrame.data).
 * @param size the width and height the vectors were taken at (width × height must equal d).
 */
export function fitSubspace(
  frames: readonly Float32Array[],
  size: { width: number; height: number },
  options: FitSubspaceOptions = {},
): SubspaceFit {
  const {
    components,
    variance = 0.95,
    maxComponents = 12,
    noiseFloor = 1.5,
    noiseEstimate = 'cross-validated',
    noiseSpread = 2,
    robustIterations = 0,
    robustCutoff = 3,
    decomposition = 'auto',
  } = options;
  const n = frames.length;
  const d = size.width * size.height;
  if (n < 2) throw new RangeError(`need at least 2 frames to learn from, got ${n}`);
  frames.forEach((f, t) => {
    if (f.length !== d) throw new RangeError(`frame ${t} has ${f.length} pixels, expected ${d}`);
  });
  if (components !== undefined && !(Number.isInteger(components) && components >= 0)) {
    throw new RangeError(`components must be a whole number ≥ 0, got ${components}`);
  }
  if (components !== undefined && components > MAX_KERNEL_COMPONENTS) {
    throw new RangeError(`components ${components} is more than the ${MAX_KERNEL_COMPONENTS} the counter takes`);
  }
  if (!(variance > 0 && variance <= 1)) throw new RangeError(`variance must be in (0, 1], got ${variance}`);
  if (!(Number.isInteger(maxComponents) && maxComponents >= 0 && maxComponents <= MAX_KERNEL_COMPONENTS)) {
    throw new RangeError(`maxComponents must be a whole number from 0 to ${MAX_KERNEL_COMPONENTS} (the most the counter takes), got ${maxComponents}`);
  }
  if (!(Number.isInteger(noiseSpread) && noiseSpread >= 0)) {
    throw new RangeError(`noiseSpread must be a whole number ≥ 0, got ${noiseSpread}`);
  }
  if (!(Number.isInteger(robustIterations) && robustIterations >= 0 && robustIterations <= 20)) {
    throw new RangeError(`robustIterations must be a whole number from 0 to 20, got ${robustIterations}`);
  }
  if (!(robustCutoff > 0)) throw new RangeError(`robustCutoff must be a number > 0, got ${robustCutoff}`);
  if (!['auto', 'snapshots', 'randomized'].includes(decomposition)) {
    throw new RangeError(`decomposition must be 'auto', 'snapshots' or 'randomized', got ${String(decomposition)}`);
  }

  const randomized = decomposition === 'randomized' || (decomposition === 'auto' && n >= RANDOMIZED_FROM);
  const choice = { components, variance, maxComponents, randomized };
  let data = frames;
  let activity: LearningActivity = { rejectedShare: 0, busyFrameShare: 0, persistentShare: 0 };
  if (robustIterations > 0) {
    // Start from the per-pixel temporal median, which people passing through barely move.
    const start = { mean: temporalMedian(frames, d), basis: new Float32Array(0), components: 0 };
    data = imputeOutliers(frames, start, size, robustCutoff, noiseFloor).frames;
  }
  let fit = plainFit(data, d, size, choice, noiseEstimate, noiseFloor, noiseSpread);
  for (let iteration = 0; iteration < robustIterations; iteration++) {
    const imputed = imputeOutliers(frames, fit, size, robustCutoff, noiseFloor);
    activity = imputed.activity;
    data = imputed.frames;
    fit = plainFit(data, d, size, choice, noiseEstimate, noiseFloor, noiseSpread);
    if (imputed.replaced === 0) break;
  }
  return { ...fit, ...activity };
}
