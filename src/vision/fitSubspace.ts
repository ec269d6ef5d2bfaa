import type { Subspace } from './subspace.ts';
import { dilate } from './dilate.ts';
import { openMask } from './openMask.ts';
import { clearLightChanges } from './clearLightChanges.ts';
import { createMask } from '../domain/frame.ts';
import { type CentredFrames, learningKernels } from './learningKernels.ts';
import { symmetricEigen } from './symmetricEigen.ts';
import { randomizedEigen } from './randomizedEigen.ts';
import { MAX_KERNEL_COMPONENTS } from './countingKernels.ts';

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
/** Extra directions iterated beyond the components wanted (Halko et al. 2011, §4.2: p = 5 to 10). */
const OVERSAMPLING = 8;
/**
 * Subspace iterations of the whole fit from its random start (Halko et al. 2011, §4.5). Each
 * shrinks the angle of a kept direction by (λ_next / λ_kept)²: with a gap of 6.6 three leave
 * 3e-3 rad (test/vision/fitSubspace.test.ts); scenes have a flat noise floor of d·σ² spread over
 * n − 1 directions, which fewer iterations do not separate from a weak lighting component.
 */
const POWER_ITERATIONS = 3;

/** What robust learning set aside of its frames: people passing through, or anything else that moved. */
export interface LearningActivity {
  /**
   * Share of learning pixels seen as foreground in the last robust refit and set aside (outliers
   * at least 3×3 pixels large and a margin around them; 0 without robust learning).
   */
  readonly rejectedShare: number;
  /**
   * Share of learning frames in which more than 0.2 % of the pixels were set aside (someone or
   * something moved through the view); 0 without robust learning.
   */
  readonly busyFrameShare: number;
  /**
   * Share of pixels set aside in more than 30 % of the learning frames:
   * parts of the view that kept changing, where the empty scene is uncertain; 0 without robust learning.
   */
  readonly persistentShare: number;
}

/** A fitted subspace and, with robust learning, how much of the learning frames it rejected. */
export interface SubspaceFit extends Subspace, LearningActivity {}

/** A frame counts as busy when more than this share of its pixels was set aside. */
const busyFramePixels = 0.002;
/** A pixel counts as persistently changing when it was set aside in more than this share of the frames. */
const persistentAfter = 0.3;

/** Frames per block when splitting the learning frames into two interleaved halves. */
const foldBlock = 8;

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
 * (`learningKernels`, f32 lanes, long sums added in f64) and in the JS loops below (f64 sums)
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
  let fit = fitAll(data, d, size, choice, noiseEstimate, noiseFloor, noiseSpread);
  for (let iteration = 0; iteration < robustIterations; iteration++) {
    const imputed = imputeOutliers(frames, fit, size, robustCutoff, noiseFloor);
    activity = imputed.activity;
    data = imputed.frames;
    fit = fitAll(data, d, size, choice, noiseEstimate, noiseFloor, noiseSpread);
    if (imputed.replaced === 0) break;
  }
  return { ...fit, ...activity };
}

/** One plain fit of mean, eigen-images and noise map. */
function fitAll(
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

interface GramFit {
  /** The subset's mean minus the global mean (δ): the subset's frames are c_t − δ. */
  offset: Float32Array;
  basis: Float32Array;
  eigenvalues: Float64Array;
  k: number;
  /** Sum of the kept Gram eigenvalues and of all of them (the trace), grey levels². */
  keptSum: number;
  total: number;
  /**
   * Randomized fits only: the coefficients of every learning frame on the fit's `block` Ritz
   * eigen-images (n × block, frame-major), the warm start of the cross-validation halves.
   */
  coefficients?: Float64Array;
  block?: number;
}

/**
 * PCA of the frames `subset` (indices into the globally centred frames, centred again on their own
 * mean) that computes only the leading directions: randomized subspace iteration on their Gram
 * operator (`randomizedEigen`; Halko, Martinsson & Tropp 2011), each product G Z = Xᵀ(X Z) being
 * two passes over the frames (`combine`, then `project`), never the n × n matrix itself. The
 * eigen-images are u_j = X Z s_j / √θ_j from the last X Z, so no further pass is needed.
 * `start` (a whole fit) gives a warm start: its Ritz directions' coefficients on the subset.
 */
function randomizedFit(
  centred: CentredFrames,
  subset: readonly number[],
  norms: Float64Array,
  d: number,
  choice: { components: number | undefined; variance: number; maxComponents: number },
  start: GramFit | undefined,
): GramFit {
  const m = subset.length;
  const n = norms.length;
  const whole = m === n;
  const rank = rankOf(m, d);
  const { components, variance, maxComponents } = choice;
  if (components !== undefined && components > rank) {
    throw new RangeError(`components ${components} is more than the ${rank} independent directions in ${m} learning frames`);
  }
  const wanted = Math.min(components ?? maxComponents, rank);
  // The subset's own mean δ of the c_t (zero, up to rounding, for all the frames).
  const offset = new Float32Array(d);
  let total = 0;
  for (const t of subset) total += norms[t];
  if (!whole && m > 0) {
    const [delta] = centred.combine(subset, new Float64Array(m).fill(1 / m), 1);
    let dd = 0;
    for (let i = 0; i < d; i++) {
      offset[i] = delta[i];
      dd += delta[i] * delta[i];
    }
    total -= m * dd;
  }
  const empty = { offset, basis: new Float32Array(0), eigenvalues: new Float64Array(0), k: 0, keptSum: 0, total: Math.max(total, 0) };
  if (wanted === 0 || rank === 0) return empty;
  let l = Math.min(wanted + OVERSAMPLING, rank);
  let lastImages: Float64Array[] = [];
  const multiply = (block: Float64Array, rows: number) => {
    lastImages = centred.combine(subset, block, rows);
    const y = centred.project(subset, lastImages);
    const out = new Float64Array(rows * m);
    for (let t = 0; t < m; t++) for (let j = 0; j < rows; j++) out[j * m + t] = y[t * rows + j];
    return out;
  };
  let warm: Float64Array | undefined;
  if (start?.coefficients !== undefined && start.block !== undefined) {
    const b = start.block;
    l = Math.min(l, b);
    warm = new Float64Array(l * m);
    for (let j = 0; j < l; j++) for (let t = 0; t < m; t++) warm[j * m + t] = start.coefficients[subset[t] * b + j];
  }
  const ritz = randomizedEigen(multiply, m, {
    block: l,
    iterations: warm === undefined ? POWER_ITERATIONS : 0,
    start: warm,
    centre: !whole,
  });
  const values = ritz.values;
  const tiny = Math.max(values[0], 0) * 1e-10;
  let found = 0;
  while (found < l && values[found] > tiny) found++;
  if (components !== undefined && components > found) {
    throw new RangeError(`components ${components} is more than the ${found} independent directions in ${m} learning frames`);
  }
  let k: number;
  if (components !== undefined) k = components;
  else {
    k = 0;
    let kept = 0;
    while (k < found && k < maxComponents && (total <= 0 || kept / total < variance)) kept += values[k++];
  }
  const eigenvalues = new Float64Array(k);
  let keptSum = 0;
  // Eigen-images u_j = Σ_a (X z_a) S_ja / √θ_j, for the k kept and (whole fits) all `found`.
  const images = whole ? found : k;
  const scaled = new Float64Array(images * l);
  for (let j = 0; j < images; j++) {
    const s = 1 / Math.sqrt(values[j]);
    for (let a = 0; a < l; a++) scaled[j * l + a] = ritz.rotation[j * l + a] * s;
    if (j < k) {
      keptSum += values[j];
      eigenvalues[j] = values[j] / (m - 1);
    }
  }
  const basis = new Float32Array(d * k);
  for (let i = 0, b = 0; i < d; i++) {
    for (let j = 0; j < k; j++, b++) {
      let u = 0;
      for (let a = 0; a < l; a++) u += lastImages[a][i] * scaled[j * l + a];
      basis[b] = u;
    }
  }
  orthonormaliseColumns(basis, d, k);
  let coefficients: Float64Array | undefined;
  if (whole) {
    // y_tj = c_t · u_j = Σ_a (Xᵀ X z_a)_t S_ja / √θ_j: from the last product, no pass over the frames.
    coefficients = new Float64Array(n * found);
    for (let t = 0; t < n; t++) {
      for (let j = 0; j < found; j++) {
        let y = 0;
        for (let a = 0; a < l; a++) y += ritz.product[a * n + t] * scaled[j * l + a];
        coefficients[t * found + j] = y;
      }
    }
  }
  return { offset, basis, eigenvalues, k, keptSum, total: Math.max(total, 0), coefficients, block: whole ? found : undefined };
}

/** The largest number of independent directions n centred frames of d pixels can have. */
function rankOf(n: number, d: number): number {
  return Math.max(0, Math.min(n - 1, d));
}

/**
 * PCA of the frames `subset` (indices into the globally centred frames) by the method of
 * snapshots. Their own Gram matrix, centred on their own mean, comes from the full one by double
 * centring: (c_a − δ)·(c_b − δ) = G_ab − r_a − r_b + g, with r the subset row means of G and g
 * their mean, δ the subset's mean of the c_t.
 */
function fitFromGram(
  gram: Float64Array,
  n: number,
  subset: readonly number[],
  centred: CentredFrames,
  d: number,
  choice: { components: number | undefined; variance: number; maxComponents: number },
): GramFit {
  const m = subset.length;
  const whole = m === n;
  const g = new Float64Array(m * m);
  const rowMean = new Float64Array(m);
  for (let a = 0; a < m; a++) {
    let s = 0;
    for (let b = 0; b < m; b++) s += gram[subset[a] * n + subset[b]];
    rowMean[a] = whole ? 0 : s / m;
  }
  let grand = 0;
  for (let a = 0; a < m; a++) grand += rowMean[a];
  grand /= m;
  for (let a = 0; a < m; a++) {
    for (let b = 0; b < m; b++) g[a * m + b] = gram[subset[a] * n + subset[b]] - rowMean[a] - rowMean[b] + grand;
  }
  const { values, vectors } = symmetricEigen(g, m);

  let total = 0;
  for (let i = 0; i < m; i++) total += g[i * m + i];
  // Non-zero directions: at most m − 1 (centring removes one) and at most d.
  const tiny = Math.max(values[0], 0) * 1e-10;
  let rank = 0;
  while (rank < rankOf(m, d) && values[rank] > tiny) rank++;

  let k: number;
  const { components, variance, maxComponents } = choice;
  if (components !== undefined) {
    if (components > rank) {
      throw new RangeError(
        `components ${components} is more than the ${rank} independent directions in ${m} learning frames`,
      );
    }
    k = components;
  } else {
    k = 0;
    let kept = 0;
    while (k < rank && k < maxComponents && (total <= 0 || kept / total < variance)) kept += values[k++];
  }

  // u_j = Σ_t w_jt (c_t − δ) = Σ_t w_jt c_t − (Σ_t w_jt) δ with w_jt = v_jt / √λ_j, all k at
  // once and, for a subset, δ = Σ_t c_t / m as row k: one pass over the frames.
  const rows = whole ? k : k + 1;
  const eigenvalues = new Float64Array(k);
  const weights = new Float64Array(rows * m);
  const weightSums = new Float64Array(k);
  let keptSum = 0;
  for (let j = 0; j < k; j++) {
    keptSum += values[j];
    eigenvalues[j] = values[j] / (m - 1);
    const s = Math.sqrt(values[j]);
    for (let t = 0; t < m; t++) {
      weights[j * m + t] = vectors[j * m + t] / s;
      weightSums[j] += weights[j * m + t];
    }
  }
  if (!whole) weights.fill(1 / m, k * m);
  const acc = centred.combine(subset, weights, rows);
  const offset = whole ? new Float32Array(d) : Float32Array.from(acc[k]);
  const basis = new Float32Array(d * k);
  for (let i = 0, b = 0; i < d; i++) {
    const o = offset[i];
    for (let j = 0; j < k; j++, b++) basis[b] = acc[j][i] - weightSums[j] * o;
  }
  orthonormaliseColumns(basis, d, k);
  return { offset, basis, eigenvalues, k, keptSum, total };
}

/**
 * The frames with every outlying pixel replaced by the model's reconstruction of it (its mean
 * plus the frame's projection onto its eigen-images), and what was replaced. A pixel is outlying
 * when its residual exceeds `cutoff` robust noise levels, the per-pixel median absolute residual
 * over the frames times 1.4826 (the MAD scale of a normal distribution; Hampel 1974), which
 * people present in a minority of the frames do not inflate.
 */
function imputeOutliers(
  frames: readonly Float32Array[],
  model: Pick<Subspace, 'mean' | 'basis' | 'components'>,
  size: { width: number; height: number },
  cutoff: number,
  floor: number,
  margin = 2,
): { frames: Float32Array[]; replaced: number; activity: LearningActivity } {
  const d = size.width * size.height;
  const n = frames.length;
  const reconstructions = frames.map(() => new Float32Array(d));
  const column = new Float32Array(n);
  const { mean, components: k } = model;
  const columns = componentMajor(model.basis, d, k);
  const c = new Float64Array(d);
  frames.forEach((f, t) => {
    const rec = reconstructions[t];
    for (let i = 0; i < d; i++) {
      c[i] = f[i] - mean[i];
      rec[i] = mean[i];
    }
    for (let j = 0; j < k; j++) {
      const u = columns[j];
      let y = 0;
      for (let i = 0; i < d; i++) y += u[i] * c[i];
      for (let i = 0; i < d; i++) rec[i] += y * u[i];
    }
  });
  const scale = new Float32Array(d);
  for (let i = 0; i < d; i++) {
    for (let t = 0; t < n; t++) column[t] = Math.abs(frames[t][i] - reconstructions[t][i]);
    scale[i] = Math.max(floor, 1.4826 * medianOf(column));
  }
  let replaced = 0;
  let busyFrames = 0;
  const outlying = new Uint8Array(d);
  const light = createMask(size.width, size.height);
  const timesReplaced = new Uint32Array(d);
  let seenPixels = 0;
  const out = frames.map((f, t) => {
    const rec = reconstructions[t];
    for (let i = 0; i < d; i++) outlying[i] = Math.abs(f[i] - rec[i]) > cutoff * scale[i] ? 1 : 0;
    // Light that changed while learning (a lamp switched, a patch of sun, a shadow) keeps the
    // texture of the scene and is kept, so that the eigen-images learn it; the temporal median
    // alone would take its rarer state for foreground and erase it. People replace the texture.
    const { width, height } = size;
    const changed = clearLightChanges({ width, height, data: f }, { width, height, data: rec }, { width, height, data: outlying }, scale, { out: light });
    // The soft edges and faint parts of a person stay below the cutoff: replace a margin around
    // every outlier (a lone one included: it may be a faint part of someone).
    const grown = dilate(changed, { radius: margin });
    const g = Float32Array.from(f);
    for (let i = 0; i < d; i++) {
      if (grown.data[i]) {
        g[i] = rec[i];
        replaced++;
      }
    }
    // What is reported as seen, though, leaves out lone pixels, which are mostly sensor noise (a
    // 3-noise-level cutoff passes about 0.3 % of them): only outliers at least 3×3 large, grown.
    const seen = dilate(openMask(changed, { radius: 1 }), { radius: margin });
    let inFrame = 0;
    for (let i = 0; i < d; i++) {
      if (seen.data[i]) {
        inFrame++;
        timesReplaced[i]++;
      }
    }
    seenPixels += inFrame;
    if (inFrame > busyFramePixels * d) busyFrames++;
    return g;
  });
  let persistent = 0;
  for (let i = 0; i < d; i++) if (timesReplaced[i] > persistentAfter * n) persistent++;
  return { frames: out, replaced, activity: { rejectedShare: seenPixels / (d * n), busyFrameShare: busyFrames / n, persistentShare: persistent / d } };
}

/** The per-pixel median over the frames. */
function temporalMedian(frames: readonly Float32Array[], d: number): Float32Array {
  const column = new Float32Array(frames.length);
  const median = new Float32Array(d);
  for (let i = 0; i < d; i++) {
    for (let t = 0; t < frames.length; t++) column[t] = frames[t][i];
    median[i] = medianOf(column);
  }
  return median;
}

/** Median of the values (reorders them). */
function medianOf(values: Float32Array): number {
  values.sort();
  const n = values.length;
  return n % 2 === 1 ? values[(n - 1) / 2] : (values[n / 2 - 1] + values[n / 2]) / 2;
}

/**
 * The JS loops of learning, in double precision (the fallback of `learningKernels`): the frames
 * centred on their mean, their Gram matrix, weighted sums and residual squares.
 */
function centredFrames(frames: readonly Float32Array[], d: number): CentredFrames {
  const mean = meanOf(frames, d);
  const centred = frames.map((f) => {
    const c = new Float32Array(d);
    for (let i = 0; i < d; i++) c[i] = f[i] - mean[i];
    return c;
  });
  return {
    mean,
    gram: () => gramMatrix(centred, d),
    combine(subset, weights, rows) {
      const m = subset.length;
      // Component-major accumulators: each update is one contiguous stream.
      const acc = Array.from({ length: rows }, () => new Float64Array(d));
      for (let t = 0; t < m; t++) {
        const c = centred[subset[t]];
        for (let j = 0; j < rows; j++) {
          const w = weights[j * m + t];
          const u = acc[j];
          for (let i = 0; i < d; i++) u[i] += w * c[i];
        }
      }
      return acc;
    },
    addResidualSquares(subset, offset, basis, k, sumSq) {
      addResidualSquares(subset.map((t) => centred[t]), offset, basis, d, k, sumSq);
    },
    project(subset, columns) {
      const kk = columns.length;
      const out = new Float64Array(subset.length * kk);
      subset.forEach((t, row) => {
        const c = centred[t];
        for (let j = 0; j < kk; j++) {
          const u = columns[j];
          let y = 0;
          for (let i = 0; i < d; i++) y += u[i] * c[i];
          out[row * kk + j] = y;
        }
      });
      return out;
    },
    squaredNorms() {
      return Float64Array.from(centred, (c) => {
        let s = 0;
        for (let i = 0; i < d; i++) s += c[i] * c[i];
        return s;
      });
    },
  };
}

function meanOf(frames: readonly Float32Array[], d: number): Float32Array {
  const sum = new Float64Array(d);
  for (const f of frames) for (let i = 0; i < d; i++) sum[i] += f[i];
  const mean = new Float32Array(d);
  for (let i = 0; i < d; i++) mean[i] = sum[i] / frames.length;
  return mean;
}

/**
 * G = XᵀX in JS: blocks of 4×4 frame pairs over pixel tiles, so each loaded pixel value serves
 * four products and a tile of every frame stays in cache while all pairs use it.
 */
function gramMatrix(centred: readonly Float32Array[], d: number): Float64Array {
  const n = centred.length;
  const gram = new Float64Array(n * n);
  const zero = new Float32Array(d);
  const padded = n + ((4 - (n % 4)) % 4);
  const x = Array.from({ length: padded }, (_, t) => centred[t] ?? zero);
  const tile = 1024;
  for (let p0 = 0; p0 < d; p0 += tile) {
    const p1 = Math.min(d, p0 + tile);
    for (let a = 0; a < padded; a += 4) {
      const a0 = x[a], a1 = x[a + 1], a2 = x[a + 2], a3 = x[a + 3];
      for (let b = 0; b <= a; b += 4) {
        const b0 = x[b], b1 = x[b + 1], b2 = x[b + 2], b3 = x[b + 3];
        let s00 = 0, s01 = 0, s02 = 0, s03 = 0, s10 = 0, s11 = 0, s12 = 0, s13 = 0;
        let s20 = 0, s21 = 0, s22 = 0, s23 = 0, s30 = 0, s31 = 0, s32 = 0, s33 = 0;
        for (let p = p0; p < p1; p++) {
          const u0 = a0[p], u1 = a1[p], u2 = a2[p], u3 = a3[p];
          const v0 = b0[p], v1 = b1[p], v2 = b2[p], v3 = b3[p];
          s00 += u0 * v0; s01 += u0 * v1; s02 += u0 * v2; s03 += u0 * v3;
          s10 += u1 * v0; s11 += u1 * v1; s12 += u1 * v2; s13 += u1 * v3;
          s20 += u2 * v0; s21 += u2 * v1; s22 += u2 * v2; s23 += u2 * v3;
          s30 += u3 * v0; s31 += u3 * v1; s32 += u3 * v2; s33 += u3 * v3;
        }
        const sums = [s00, s01, s02, s03, s10, s11, s12, s13, s20, s21, s22, s23, s30, s31, s32, s33];
        for (let i = 0; i < 4; i++) {
          for (let j = 0; j < 4; j++) {
            const r = a + i, c = b + j;
            if (r < n && c < n && c <= r) gram[r * n + c] += sums[i * 4 + j];
          }
        }
      }
    }
  }
  for (let a = 0; a < n; a++) for (let b = 0; b < a; b++) gram[b * n + a] = gram[a * n + b];
  return gram;
}

/** Modified Gram–Schmidt on the k pixel-major columns, in double precision. */
function orthonormaliseColumns(basis: Float32Array, d: number, k: number): void {
  for (let j = 0; j < k; j++) {
    for (let q = 0; q < j; q++) {
      let dot = 0;
      for (let i = 0; i < d; i++) dot += basis[i * k + j] * basis[i * k + q];
      for (let i = 0; i < d; i++) basis[i * k + j] -= dot * basis[i * k + q];
    }
    let norm = 0;
    for (let i = 0; i < d; i++) norm += basis[i * k + j] * basis[i * k + j];
    norm = Math.sqrt(norm);
    if (norm > 0) for (let i = 0; i < d; i++) basis[i * k + j] /= norm;
  }
}

/** Adds each (centred) frame's squared residual r_i² against (offset, basis) into sumSq. */
function addResidualSquares(
  frames: readonly Float32Array[],
  offset: Float32Array,
  basis: Float32Array,
  d: number,
  k: number,
  sumSq: Float64Array,
): void {
  const columns = componentMajor(basis, d, k);
  const r = new Float64Array(d);
  for (const f of frames) {
    for (let i = 0; i < d; i++) r[i] = f[i] - offset[i];
    for (let j = 0; j < k; j++) {
      const u = columns[j];
      let y = 0;
      for (let i = 0; i < d; i++) y += u[i] * r[i];
      // Subtracting each component from the running residual (modified Gram–Schmidt order)
      // equals subtracting B·Bᵀc at once, since the columns are orthonormal.
      for (let i = 0; i < d; i++) r[i] -= y * u[i];
    }
    for (let i = 0; i < d; i++) sumSq[i] += r[i] * r[i];
  }
}

/** The k columns of a pixel-major basis as separate arrays. */
function componentMajor(basis: Float32Array, d: number, k: number): Float32Array[] {
  return Array.from({ length: k }, (_, j) => {
    const u = new Float32Array(d);
    for (let i = 0, b = j; i < d; i++, b += k) u[i] = basis[b];
    return u;
  });
}

/** σ_i = max(floor, largest √(sumSq / divisor) within `radius` pixels of i). */
function spreadMax(
  sumSq: Float64Array,
  divisor: number,
  floor: number,
  size: { width: number; height: number },
  radius: number,
): Float32Array {
  const { width, height } = size;
  const sigma = new Float32Array(sumSq.length);
  for (let i = 0; i < sumSq.length; i++) sigma[i] = Math.sqrt(sumSq[i] / divisor);
  const rows = new Float32Array(sigma.length);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let m = 0;
      for (let u = Math.max(0, x - radius); u <= Math.min(width - 1, x + radius); u++) m = Math.max(m, sigma[y * width + u]);
      rows[y * width + x] = m;
    }
  }
  const noise = new Float32Array(sigma.length);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let m = floor;
      for (let v = Math.max(0, y - radius); v <= Math.min(height - 1, y + radius); v++) m = Math.max(m, rows[v * width + x]);
      noise[y * width + x] = m;
    }
  }
  return noise;
}
