import { at, kernelEnd, kernelWidth, type Pass } from './pass.ts';

/** Pixels sampled for the robust noise scale: every 7th. */
export const scaleStride = 7;

/** (r/σ)² as Float32s at every scaleStride-th pixel (0, scaleStride, …) into sample. */
export function samplePass(pass: Pass, y: Float64Array, sample: Float32Array): void {
  const { z, mean, basis, k, weight } = pass;
  const d = z.length;
  const width = kernelWidth(k);
  const end = kernelEnd(d, k, width);
  if (width === 8) sample8(pass, y, sample, end);
  else if (width === 12) sample12(pass, y, sample, end);
  const first = Math.ceil(end / scaleStride);
  for (let i = first * scaleStride, b = i * k, s = first; i < d; i += scaleStride, b += k * scaleStride, s++) {
    let r = z[i] - mean[i];
    for (let j = 0; j < k; j++) r -= basis[b + j] * y[j];
    sample[s] = r * r * weight[i];
  }
}

/** The sample pass over the sampled pixels s · scaleStride < end, 8 components unrolled (k ≤ 8); see samplePass. */
function sample8(pass: Pass, y: Float64Array, sample: Float32Array, end: number): void {
  const { z, mean, basis, k, weight } = pass;
  const y0 = at(y, k, 0), y1 = at(y, k, 1), y2 = at(y, k, 2), y3 = at(y, k, 3);
  const y4 = at(y, k, 4), y5 = at(y, k, 5), y6 = at(y, k, 6), y7 = at(y, k, 7);
  const stride = k * scaleStride;
  for (let i = 0, b = 0, s = 0; i < end; i += scaleStride, b += stride, s++) {
    let r = z[i] - mean[i];
    r -= basis[b] * y0;
    r -= basis[b + 1] * y1;
    r -= basis[b + 2] * y2;
    r -= basis[b + 3] * y3;
    r -= basis[b + 4] * y4;
    r -= basis[b + 5] * y5;
    r -= basis[b + 6] * y6;
    r -= basis[b + 7] * y7;
    sample[s] = r * r * weight[i];
  }
}

/** The sample pass over the sampled pixels s · scaleStride < end, 12 components unrolled (k ≤ 12); see samplePass. */
function sample12(pass: Pass, y: Float64Array, sample: Float32Array, end: number): void {
  const { z, mean, basis, k, weight } = pass;
  const y0 = at(y, k, 0), y1 = at(y, k, 1), y2 = at(y, k, 2), y3 = at(y, k, 3);
  const y4 = at(y, k, 4), y5 = at(y, k, 5), y6 = at(y, k, 6), y7 = at(y, k, 7);
  const y8 = at(y, k, 8), y9 = at(y, k, 9), y10 = at(y, k, 10), y11 = at(y, k, 11);
  const stride = k * scaleStride;
  for (let i = 0, b = 0, s = 0; i < end; i += scaleStride, b += stride, s++) {
    let r = z[i] - mean[i];
    r -= basis[b] * y0;
    r -= basis[b + 1] * y1;
    r -= basis[b + 2] * y2;
    r -= basis[b + 3] * y3;
    r -= basis[b + 4] * y4;
    r -= basis[b + 5] * y5;
    r -= basis[b + 6] * y6;
    r -= basis[b + 7] * y7;
    r -= basis[b + 8] * y8;
    r -= basis[b + 9] * y9;
    r -= basis[b + 10] * y10;
    r -= basis[b + 11] * y11;
    sample[s] = r * r * weight[i];
  }
}
