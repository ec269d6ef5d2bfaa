import type { GreyFrame, Mask } from '../domain/frame.ts';
import type { Subspace } from './subspace.ts';
import { solveSymmetric } from './solveSymmetric.ts';

export interface AdaptBackgroundOptions {
  /** Forgetting factor of this update, 0..1 inclusive: the share of the residual taken into the mean; default 0.05. */
  rate?: number;
  /**
   * A pixel of `background` is still left out when its own |r| exceeds this many noise units
   * (times √noiseScale): a "maybe foreground" level below the detection threshold, for soft
   * edges and faint parts of people; > 0, default 2.
   */
  maybeLevel?: number;
  /** Factor on the noise variance for this frame (see frameNoiseScale), ≥ 1; default 1. */
  noiseScale?: number;
  /**
   * Radius in pixels of the smallest square window over which the relative drift of the used
   * pixels is averaged for the left-out ones, whole number ≥ 1; where it holds too few used
   * pixels, windows 3 and 9 times as large are tried. Default ⌈height / 24⌉.
   */
  fieldRadius?: number;
  /** Share of a field window (inside the image) that must be used pixels for its average to count, in (0, 1]; default 0.25. */
  minSupport?: number;
  /** Pixels (1) whose whole residual is taken into the mean at once: a static object being absorbed. Default none. */
  absorb?: Uint8Array;
  /**
   * The frame's subspace coordinates y when the caller has them already (length k; e.g. the
   * counter's robust coordinates of the same frame, fitted on the pixels its residual explains):
   * step 1 below is then skipped, a pass of d·k²/2 multiply-adds. Default: fitted here.
   */
  coefficients?: Float64Array;
  /** The updated mean; may be `model.mean` itself to update in place. Default: a new array. */
  out?: Float32Array;
  /** Work buffers reused between calls (allocated when not given; contents on return unspecified). */
  scratch?: AdaptBackgroundScratch;
}

/** Work buffers of adaptBackground, for a d-pixel frame. */
export interface AdaptBackgroundScratch {
  /** Length d: the residual r. */
  readonly residual: Float32Array;
  /** Length d: the relative residual r / (z − r) of used pixels. */
  readonly relative: Float32Array;
  /** Length d: that relative residual averaged around each left-out pixel (NaN where no window had support; other pixels unspecified). */
  readonly field: Float32Array;
  /** Length 2·(width + 1)·(height + 1): the summed-area tables of the normalised convolution. */
  readonly sums: Float64Array;
  /** Length d: the used pixels (1) of this update. */
  readonly used: Uint8Array;
}

/** What one update did. */
export interface BackgroundUpdate {
  /** The updated mean (`out` when given). */
  readonly mean: Float32Array;
  /** Coordinates y of the frame's background in the subspace (least squares over the background pixels). */
  readonly coefficients: Float64Array;
  /** Pixels updated from their own residual. */
  readonly used: number;
  /** Pixels left out and updated from the drift around them. */
  readonly filled: number;
  /** Pixels absorbed (`absorb`). */
  readonly absorbed: number;
  /** False when no background pixel, or fewer than 2k, was left to fit the coordinates (then the mean is unchanged). */
  readonly applied: boolean;
}

/** Allocates the work buffers for a width × height frame. */
export function adaptBackgroundScratch(width: number, height: number): AdaptBackgroundScratch {
  const d = width * height;
  return { residual: new Float32Array(d), relative: new Float32Array(d), field: new Float32Array(d), sums: new Float64Array(2 * (width + 1) * (height + 1)), used: new Uint8Array(d) };
}

/**
 * One step of following slow drift of the empty scene (daylight, lamps warming up, exposure):
 * the mean image moves towards what the subspace leaves unexplained, on pixels judged
 * background, with a forgetting factor; foreground is never learned, so a person sitting still
 * stays foreground however long they sit.
 *
 * This is the mean update with a forgetting factor of incremental subspace learning
 * (Levy & Lindenbaum 2000; Ross, Lim, Lin & Yang 2008, §3.1: μ ← f·μ + (1 − f)·z, here with
 * rate = 1 − f) restricted to background pixels, as in selective background updating, and applied
 * to the residual r = (z − μ) − B·y only, so that what the eigen-images already explain (the
 * global brightness the model learned) does not move the mean. The eigen-images are kept.
 *
 * 1. y is the least-squares fit over the pixels of `background`:
 *    y = (B_Kᵀ B_K)⁻¹ B_Kᵀ (z − μ)_K (robust eigen-image coefficients with a known outlier set,
 *    Leonardis & Bischof 2000), and r = (z − μ) − B·y everywhere.
 * 2. Used pixels: those of `background` whose own |r| ≤ maybeLevel · σ · √noiseScale; each moves
 *    μ_i ← μ_i + rate · r_i.
 * 3. Left-out pixels (foreground, its margin, maybe-foreground): the background under a person
 *    drifts too (the sun that falls on them falls on the floor around them), and a person who
 *    leaves must not leave a ghost of stale background. Their mean moves as the used pixels
 *    around them move, relative to the background's brightness b = z − r (its reconstruction):
 *    μ_i ← μ_i + rate · f_i · b_i, where f is the average of r / b over the used pixels of a
 *    (2·fieldRadius + 1)² window, by normalised convolution (Knutsson & Westin 1993: the box sum
 *    of certainty × value over the box sum of certainty, certainty 1 on used pixels). Where the
 *    window holds less than `minSupport` used pixels, windows 3 and 9 times as large are tried;
 *    where none does, the mean stays. Nothing of a left-out pixel's own residual enters. This
 *    follows drift that is smooth at the scale of the windows; a sharp light edge that moves
 *    under someone sitting still is followed too slowly there, and they leave a ghost.
 * 4. `absorb` pixels take their whole residual: μ_i ← μ_i + r_i (static objects, by the caller's
 *    rule on how long they stayed).
 *
 * Example (k = 0, rate 0.1): mean [100, 100, 100, 100], frame [110, 110, 110, 110], background
 * everywhere but pixel 2, fieldRadius 1: the mean becomes [101, 101, 101, 101] (pixel 2 moves with
 * its neighbours: their r / b is 10 / 100).
 *
 * @param model the empty-scene model; `model.mean` is read (and written when `out` is it)
 * @param background pixels that may be used (1): not foreground and not near it
 */
export function adaptBackground(
  model: Pick<Subspace, 'width' | 'height' | 'components' | 'mean' | 'basis' | 'noise'>,
  frame: GreyFrame,
  background: Mask,
  options: AdaptBackgroundOptions = {},
): BackgroundUpdate {
  const { width, height, components: k, mean, basis, noise } = model;
  const {
    rate = 0.05,
    maybeLevel = 2,
    noiseScale = 1,
    fieldRadius = Math.ceil(height / 24),
    minSupport = 0.25,
    absorb,
    coefficients,
    out,
    scratch = adaptBackgroundScratch(width, height),
  } = options;
  const d = width * height;
  if (!(rate >= 0 && rate <= 1)) throw new RangeError(`rate must be in 0..1, got ${rate}`);
  if (!(maybeLevel > 0)) throw new RangeError(`maybeLevel must be > 0 noise units, got ${maybeLevel}`);
  if (!(noiseScale >= 1)) throw new RangeError(`noiseScale must be ≥ 1, got ${noiseScale}`);
  if (!(Number.isInteger(fieldRadius) && fieldRadius >= 1)) throw new RangeError(`fieldRadius must be a whole number ≥ 1 (pixels), got ${fieldRadius}`);
  if (!(minSupport > 0 && minSupport <= 1)) throw new RangeError(`minSupport must be in (0, 1], got ${minSupport}`);
  if (frame.width !== width || frame.height !== height) throw new RangeError(`frame is ${frame.width}×${frame.height}, the model is ${width}×${height}`);
  if (background.width !== width || background.height !== height || background.data.length !== d) {
    throw new RangeError(`background mask must be ${width}×${height}`);
  }
  if (mean.length !== d || basis.length !== d * k || noise.length !== d) throw new RangeError(`mean, basis and noise must fit ${width}×${height} pixels and ${k} components`);
  if (absorb !== undefined && absorb.length !== d) throw new RangeError(`absorb has length ${absorb.length}, expected ${d}`);
  if (coefficients !== undefined && coefficients.length !== k) throw new RangeError(`coefficients has length ${coefficients.length}, expected ${k}`);
  const result = out ?? new Float32Array(d);
  if (result.length !== d) throw new RangeError(`out has length ${result.length}, expected ${d}`);
  const { residual, relative, field, sums, used } = scratch;
  if (residual.length !== d || relative.length !== d || field.length !== d || used.length !== d || sums.length < 2 * (width + 1) * (height + 1)) {
    throw new RangeError(`scratch buffers must fit ${d} pixels (see adaptBackgroundScratch)`);
  }

  const z = frame.data;
  const bg = background.data;
  const y = new Float64Array(k);
  let kept = 0;
  for (let i = 0; i < d; i++) kept += bg[i] !== 0 ? 1 : 0;
  // No background, or too little to fit k coordinates (fewer than 2k pixels): leave the mean as it is.
  if (coefficients !== undefined) y.set(coefficients);
  if (kept < Math.max(2 * k, 1) || (coefficients === undefined && !fitCoordinates(z, mean, basis, k, bg, kept, y))) {
    if (result !== mean) result.set(mean);
    return { mean: result, coefficients: y, used: 0, filled: 0, absorbed: 0, applied: false };
  }

  // r = (z − μ) − B y, the used pixels and their relative residual.
  const level2 = maybeLevel * maybeLevel * noiseScale;
  let usedCount = 0;
  for (let i = 0, b = 0; i < d; i++, b += k) {
    let r = z[i] - mean[i];
    for (let j = 0; j < k; j++) r -= basis[b + j] * y[j];
    residual[i] = r;
    const s = noise[i];
    const use = bg[i] !== 0 && r * r <= level2 * s * s ? 1 : 0;
    used[i] = use;
    usedCount += use;
    relative[i] = use ? r / Math.max(1, z[i] - r) : 0;
  }
  const filling = usedCount < d;
  if (filling) summedAreaTables(relative, used, width, height, sums);
  const w1 = width + 1;
  const size = w1 * (height + 1);
  const radii = [fieldRadius, 3 * fieldRadius, 9 * fieldRadius].filter((r, n, all) => n === 0 || all[n - 1] < Math.max(width, height));

  let filled = 0;
  let absorbed = 0;
  for (let i = 0; i < d; i++) {
    const m = mean[i];
    if (absorb !== undefined && absorb[i] !== 0) {
      result[i] = m + residual[i];
      absorbed++;
    } else if (used[i]) {
      result[i] = m + rate * residual[i];
    } else {
      // The average relative drift of the used pixels around: the smallest window with support.
      let f = NaN;
      const x = i % width;
      const y = (i - x) / width;
      for (const r of radii) {
        const x0 = Math.max(0, x - r);
        const x1 = Math.min(width, x + r + 1);
        const y0 = Math.max(0, y - r);
        const y1 = Math.min(height, y + r + 1);
        const a = y0 * w1 + x0;
        const b = y0 * w1 + x1;
        const c0 = y1 * w1 + x0;
        const c1 = y1 * w1 + x1;
        // The certainty sums are whole numbers (rounding removes float drift of the sums).
        const c = Math.round(sums[size + c1] - sums[size + b] - sums[size + c0] + sums[size + a]);
        if (c >= 1 && c >= minSupport * (x1 - x0) * (y1 - y0)) {
          f = (sums[c1] - sums[b] - sums[c0] + sums[a]) / c;
          break;
        }
      }
      field[i] = f;
      if (!Number.isNaN(f)) {
        result[i] = m + rate * f * Math.max(1, z[i] - residual[i]);
        filled++;
      } else {
        result[i] = m;
      }
    }
  }
  return { mean: result, coefficients: y, used: usedCount, filled, absorbed, applied: true };
}

/**
 * y = (B_Kᵀ B_K)⁻¹ B_Kᵀ (z − μ)_K over the pixels K set in `keep`. Since BᵀB = I, B_Kᵀ B_K is
 * I − B_Oᵀ B_O over the left-out pixels O when they are fewer. Returns false when the normal
 * matrix is not positive definite.
 */
function fitCoordinates(
  z: Float32Array,
  mean: Float32Array,
  basis: Float32Array,
  k: number,
  keep: Uint8Array,
  kept: number,
  y: Float64Array,
): boolean {
  if (k === 0) return true;
  const d = z.length;
  const normal = new Float64Array(k * k);
  const rhs = new Float64Array(k);
  const complement = kept > d / 2;
  if (complement) for (let j = 0; j < k; j++) normal[j * k + j] = 1;
  const sign = complement ? -1 : 1;
  for (let i = 0, b = 0; i < d; i++, b += k) {
    const inside = keep[i] !== 0;
    if (inside) {
      const c = z[i] - mean[i];
      for (let j = 0; j < k; j++) rhs[j] += basis[b + j] * c;
    }
    if (inside !== complement) {
      for (let p = 0; p < k; p++) {
        const bp = sign * basis[b + p];
        for (let q = 0; q <= p; q++) normal[p * k + q] += bp * basis[b + q];
      }
    }
  }
  return solveSymmetric(normal, rhs, k, y);
}

/**
 * Summed-area tables (Crow 1984) of `value` and `certainty`, each (width + 1) × (height + 1) with
 * a zero row and column in front, into sums[0 ..] and sums[(width + 1)(height + 1) ..]: any box
 * sum of either is then four lookups, for the normalised convolution (Knutsson & Westin 1993) at
 * the left-out pixels only. `value` must be 0 where the certainty is 0.
 */
function summedAreaTables(value: Float32Array, certainty: Uint8Array, width: number, height: number, sums: Float64Array): void {
  const w1 = width + 1;
  const size = w1 * (height + 1);
  sums.fill(0, 0, w1);
  sums.fill(0, size, size + w1);
  for (let y = 0; y < height; y++) {
    const row = (y + 1) * w1;
    sums[row] = 0;
    sums[size + row] = 0;
    let rv = 0;
    let rc = 0;
    for (let x = 0; x < width; x++) {
      const i = y * width + x;
      rv += value[i];
      rc += certainty[i];
      const j = row + x + 1;
      sums[j] = sums[j - w1] + rv;
      sums[size + j] = sums[size + j - w1] + rc;
    }
  }
}
