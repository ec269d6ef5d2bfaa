import type { Outliers } from './outliers.ts';
import { at, kernelEnd, kernelWidth, type Pass } from './pass.ts';

/**
 * The full pass of r = (z − μ) − B y: e_i = r_i² into pass.energy, with dffs and the normalised
 * sum; every pixel whose e_i / σ_i² (as a Float32) exceeds `limit` (or is NaN) is handed to
 * `outliers`. Returns the number of pixels handed over.
 */
export function residualPass(pass: Pass, y: Float64Array, limit: number, outliers: Outliers | undefined): number {
  const { z, mean, basis, k, weight, energy } = pass;
  const d = z.length;
  const width = kernelWidth(k);
  const end = kernelEnd(d, k, width);
  pass.dffs = 0;
  pass.normalised = 0;
  let count = width === 8 ? residual8(pass, y, limit, outliers, end) : width === 12 ? residual12(pass, y, limit, outliers, end) : 0;
  let dffs = pass.dffs;
  let normalised = pass.normalised;
  for (let i = end, b = end * k; i < d; i++, b += k) {
    let r = z[i] - mean[i];
    for (let j = 0; j < k; j++) r -= basis[b + j] * y[j];
    const e = r * r;
    energy[i] = e;
    dffs += e;
    const v = e * weight[i];
    normalised += v;
    if (!(Math.fround(v) <= limit) && outliers !== undefined) {
      outliers.add(i, z[i] - mean[i]);
      count++;
    }
  }
  pass.dffs = dffs;
  pass.normalised = normalised;
  return count;
}

/** The full pass over the pixels i < end, 8 components unrolled (k ≤ 8); see residualPass. */
function residual8(pass: Pass, y: Float64Array, limit: number, outliers: Outliers | undefined, end: number): number {
  const { z, mean, basis, k, weight, energy } = pass;
  const y0 = at(y, k, 0), y1 = at(y, k, 1), y2 = at(y, k, 2), y3 = at(y, k, 3);
  const y4 = at(y, k, 4), y5 = at(y, k, 5), y6 = at(y, k, 6), y7 = at(y, k, 7);
  let dffs = pass.dffs;
  let normalised = pass.normalised;
  let count = 0;
  for (let i = 0, b = 0; i < end; i++, b += k) {
    let r = z[i] - mean[i];
    r -= basis[b] * y0;
    r -= basis[b + 1] * y1;
    r -= basis[b + 2] * y2;
    r -= basis[b + 3] * y3;
    r -= basis[b + 4] * y4;
    r -= basis[b + 5] * y5;
    r -= basis[b + 6] * y6;
    r -= basis[b + 7] * y7;
    const e = r * r;
    energy[i] = e;
    dffs += e;
    const v = e * weight[i];
    normalised += v;
    if (!(Math.fround(v) <= limit) && outliers !== undefined) {
      outliers.add(i, z[i] - mean[i]);
      count++;
    }
  }
  pass.dffs = dffs;
  pass.normalised = normalised;
  return count;
}

/** The full pass over the pixels i < end, 12 components unrolled (k ≤ 12); see residualPass. */
function residual12(pass: Pass, y: Float64Array, limit: number, outliers: Outliers | undefined, end: number): number {
  const { z, mean, basis, k, weight, energy } = pass;
  const y0 = at(y, k, 0), y1 = at(y, k, 1), y2 = at(y, k, 2), y3 = at(y, k, 3);
  const y4 = at(y, k, 4), y5 = at(y, k, 5), y6 = at(y, k, 6), y7 = at(y, k, 7);
  const y8 = at(y, k, 8), y9 = at(y, k, 9), y10 = at(y, k, 10), y11 = at(y, k, 11);
  let dffs = pass.dffs;
  let normalised = pass.normalised;
  let count = 0;
  for (let i = 0, b = 0; i < end; i++, b += k) {
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
    const e = r * r;
    energy[i] = e;
    dffs += e;
    const v = e * weight[i];
    normalised += v;
    if (!(Math.fround(v) <= limit) && outliers !== undefined) {
      outliers.add(i, z[i] - mean[i]);
      count++;
    }
  }
  pass.dffs = dffs;
  pass.normalised = normalised;
  return count;
}
