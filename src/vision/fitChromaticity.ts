import type { ChromaticityModel } from './chromaticityModel.ts';
import { colourDistortion } from './colourDistortion.ts';
import { quickselect } from './quickselect.ts';

export interface FitChromaticityOptions {
  /** Smallest per-channel spread σ, in 8-bit levels (inclusive); > 0, default 1.5 (the grey subspace's noise floor). */
  spreadFloor?: number;
  /**
   * Smallest chromaticity-distortion spread b, in σ units (inclusive); > 0, default 0.1. Keeps a
   * pixel that never changed while learning from becoming infinitely sensitive.
   */
  chromaSpreadFloor?: number;
  /**
   * Robust statistics, for learning frames in which people pass through: E is the per-pixel
   * median instead of the mean, σ is 1.4826 × the median absolute deviation (consistent with
   * the standard deviation for normal data), and b is 1/√(ln 2) = 1.2011 × the median CD (the
   * ratio of the root mean square to the median of a Rayleigh distribution, which CD follows
   * when the off-line residual is isotropic normal noise in two dimensions). Default false.
   */
  robust?: boolean;
}

/** Pixel values gathered per block when transposing frames for the robust statistics. */
const block = 256;

/**
 * Learns the colour statistics of the empty scene (Horprasert, Harwood & Davis 1999, §4.1) from
 * colour frames of it, alongside the grey subspace: per pixel and channel the expected colour
 * E = mean over the frames and its spread σ = the sample standard deviation (floored at
 * `spreadFloor`), then, with those, b = the root mean square of the chromaticity distortion CD
 * (colourDistortion) of every learning frame, floored at `chromaSpreadFloor`. Their α spread a_i
 * is not kept: the brightness the frame should have comes from the grey subspace instead (see
 * suppressShadows).
 *
 * Example: two 1-pixel frames (10, 20, 30) and (30, 60, 90) give E = (20, 40, 60) and
 * σ = (14.14, 28.28, 42.43); both are E scaled (a change of brightness only), so their CD is 0
 * and b is the floor, 0.1.
 *
 * @param frames n ≥ 2 colour frames' data (ColourFrame.data), each of length 3 × width × height.
 * @param size the width and height of the frames.
 */
export function fitChromaticity(
  frames: readonly Uint8Array[],
  size: { width: number; height: number },
  options: FitChromaticityOptions = {},
): ChromaticityModel {
  const { spreadFloor = 1.5, chromaSpreadFloor = 0.1, robust = false } = options;
  const { width, height } = size;
  const n = frames.length;
  const d = width * height;
  if (n < 2) throw new RangeError(`need at least 2 colour frames to learn from, got ${n}`);
  frames.forEach((f, t) => {
    if (f.length !== 3 * d) throw new RangeError(`colour frame ${t} has ${f.length} values, expected ${3 * d} (${width}×${height}×3)`);
  });
  if (!(spreadFloor > 0)) throw new RangeError(`spreadFloor must be > 0, got ${spreadFloor}`);
  if (!(chromaSpreadFloor > 0)) throw new RangeError(`chromaSpreadFloor must be > 0, got ${chromaSpreadFloor}`);

  const mean = new Float32Array(3 * d);
  const spread = new Float32Array(3 * d);
  if (robust) medianAndMad(frames, mean, spread);
  else meanAndDeviation(frames, mean, spread);
  for (let j = 0; j < 3 * d; j++) if (!(spread[j] >= spreadFloor)) spread[j] = spreadFloor;

  const reference = { width, height, mean, spread };
  const buffers = { alpha: new Float32Array(d), cd: new Float32Array(d) };
  const chromaSpread = new Float32Array(d);
  if (robust) {
    const cds = Array.from({ length: n }, () => new Float32Array(d));
    frames.forEach((data, t) => colourDistortion({ width, height, data }, reference, { out: { alpha: buffers.alpha, cd: cds[t] } }));
    const column = new Float32Array(n);
    for (let i = 0; i < d; i++) {
      for (let t = 0; t < n; t++) column[t] = cds[t][i];
      chromaSpread[i] = 1.2011 * median(column);
    }
  } else {
    const sum = new Float64Array(d);
    for (const data of frames) {
      const { cd } = colourDistortion({ width, height, data }, reference, { out: buffers });
      for (let i = 0; i < d; i++) sum[i] += cd[i] * cd[i];
    }
    for (let i = 0; i < d; i++) chromaSpread[i] = Math.sqrt(sum[i] / n);
  }
  for (let i = 0; i < d; i++) if (!(chromaSpread[i] >= chromaSpreadFloor)) chromaSpread[i] = chromaSpreadFloor;
  return { width, height, mean, spread, chromaSpread, frameCount: n };
}

/** Per value: the mean and the sample standard deviation (n − 1) over the frames. */
function meanAndDeviation(frames: readonly Uint8Array[], mean: Float32Array, spread: Float32Array): void {
  const m = mean.length;
  const n = frames.length;
  const sum = new Float64Array(m);
  const squares = new Float64Array(m);
  for (const data of frames) {
    for (let j = 0; j < m; j++) {
      const v = data[j];
      sum[j] += v;
      squares[j] += v * v;
    }
  }
  for (let j = 0; j < m; j++) {
    const mu = sum[j] / n;
    mean[j] = mu;
    spread[j] = Math.sqrt(Math.max(0, (squares[j] - n * mu * mu) / (n - 1)));
  }
}

/** Per value: the median and 1.4826 × the median absolute deviation over the frames. */
function medianAndMad(frames: readonly Uint8Array[], mean: Float32Array, spread: Float32Array): void {
  const m = mean.length;
  const n = frames.length;
  // Transposed a block at a time, so that each frame is read in runs of `block` values.
  const tile = new Float32Array(block * n);
  const column = new Float32Array(n);
  for (let j0 = 0; j0 < m; j0 += block) {
    const len = Math.min(block, m - j0);
    for (let t = 0; t < n; t++) {
      const data = frames[t];
      for (let q = 0; q < len; q++) tile[q * n + t] = data[j0 + q];
    }
    for (let q = 0; q < len; q++) {
      column.set(tile.subarray(q * n, q * n + n));
      const med = median(column);
      for (let t = 0; t < n; t++) column[t] = Math.abs(tile[q * n + t] - med);
      mean[j0 + q] = med;
      spread[j0 + q] = 1.4826 * median(column);
    }
  }
}

/** The median of `values` (the mean of the two middle values for an even count); reorders `values`. */
function median(values: Float32Array): number {
  const n = values.length;
  const hi = n >> 1;
  const upper = quickselect(values, hi, { scratch: values });
  if (n % 2 === 1) return upper;
  // After selecting rank hi in place, ranks below it sit in values[0 .. hi − 1].
  let lower = -Infinity;
  for (let t = 0; t < hi; t++) if (values[t] > lower) lower = values[t];
  return (lower + upper) / 2;
}
