import { outputMask, type Mask } from '../domain/frame.ts';

export interface ThresholdResidualOptions {
  /**
   * Foreground threshold in noise units: a pixel is foreground when the local mean of (r / σ)²
   * is greater than threshold² (strictly). A number for the whole frame, or one per pixel.
   * Default 3.
   */
  threshold?: number | Float32Array;
  /**
   * Factor on the noise variance for this frame, ≥ 1 in practice; default 1. A frame that is
   * noisier everywhere than the learning frames (see frameNoiseScale) raises every threshold².
   */
  noiseScale?: number;
  /** Radius of the square smoothing window in pixels (0 = no smoothing); default 1, i.e. 3×3. */
  radius?: number;
  /**
   * The pixel itself must also exceed this share of the threshold (in noise units, so its own
   * (r/σ)² > (share · threshold)²), 0..1; default 0.5. Keeps the smoothing from growing a
   * halo one window wide around every high-contrast blob. 0 turns the check off.
   */
  pixelShare?: number;
  /** Mask to write into instead of allocating. */
  out?: Mask;
  /** Scratch buffer of width × height floats for the smoothing, reused instead of allocating. */
  scratch?: Float32Array;
}

/**
 * Foreground mask from residual energy, in units of the learned per-pixel noise.
 *
 * The normalised energy (r_i / σ_i)² is about 1 where the model explains the scene. Averaging it
 * over a small window before thresholding (a box filter, computed separably with running sums)
 * suppresses isolated noisy pixels while keeping the edges of a person-sized blob; near the image
 * border the mean is over the pixels inside the image. A threshold of 3 noise units then asks for
 * a local mean of (r/σ)² above 9.
 *
 * Both passes read memory in raster order: the vertical running sums are kept one per column
 * and advanced a row at a time. Memory: besides `out` and `scratch` (allocated when not given),
 * each call allocates one row of `width` Float64 column sums.
 *
 * @param energy e_i = r_i², row-major (see residualEnergy).
 * @param inverseNoiseVariance 1 / σ_i² per pixel.
 */
export function thresholdResidual(
  energy: Float32Array,
  inverseNoiseVariance: Float32Array,
  size: { width: number; height: number },
  options: ThresholdResidualOptions = {},
): Mask {
  const { threshold = 3, noiseScale = 1, radius = 1, pixelShare = 0.5, out, scratch } = options;
  const { width, height } = size;
  const d = width * height;
  if (energy.length !== d || inverseNoiseVariance.length !== d) {
    throw new RangeError(`energy and noise must have ${width}×${height} = ${d} pixels`);
  }
  if (typeof threshold !== 'number' && threshold.length !== d) {
    throw new RangeError(`threshold map has ${threshold.length} pixels, expected ${d}`);
  }
  if (!(Number.isInteger(radius) && radius >= 0)) throw new RangeError(`radius must be a whole number ≥ 0, got ${radius}`);
  const mask = outputMask(width, height, out);
  const rows = scratch ?? new Float32Array(d);
  if (rows.length !== d) throw new RangeError(`scratch has length ${rows.length}, expected ${d}`);
  const m = mask.data;

  // Horizontal running sums of the normalised energy.
  const lead = Math.min(radius, width);
  for (let row = 0; row < d; row += width) {
    let sum = 0;
    for (let x = 0; x < lead; x++) sum += energy[row + x] * inverseNoiseVariance[row + x];
    for (let x = 0; x < width; x++) {
      const add = x + radius;
      if (add < width) sum += energy[row + add] * inverseNoiseVariance[row + add];
      const drop = x - radius - 1;
      if (drop >= 0) sum -= energy[row + drop] * inverseNoiseVariance[row + drop];
      rows[row + x] = sum;
    }
  }
  // Vertical running sums, one per column, divided by the number of in-image pixels in the window.
  const share2 = pixelShare * pixelShare;
  const map = typeof threshold === 'number' ? undefined : threshold;
  const single = typeof threshold === 'number' ? threshold * threshold * noiseScale : 0;
  const columns = new Float64Array(width);
  for (let y = 0; y < Math.min(radius, height); y++) {
    for (let x = 0, i = y * width; x < width; x++, i++) columns[x] += rows[i];
  }
  for (let y = 0; y < height; y++) {
    const add = y + radius < height ? (y + radius) * width : -1;
    const drop = y - radius - 1 >= 0 ? (y - radius - 1) * width : -1;
    const ny = Math.min(y + radius, height - 1) - Math.max(y - radius, 0) + 1;
    for (let x = 0, i = y * width; x < width; x++, i++) {
      let sum = columns[x];
      if (add >= 0) sum += rows[add + x];
      if (drop >= 0) sum -= rows[drop + x];
      columns[x] = sum;
      const nx = Math.min(x + radius, width - 1) - Math.max(x - radius, 0) + 1;
      const t = map === undefined ? single : map[i] * map[i] * noiseScale;
      m[i] = sum / (nx * ny) > t && (share2 === 0 || energy[i] * inverseNoiseVariance[i] > t * share2) ? 1 : 0;
    }
  }
  return mask;
}
