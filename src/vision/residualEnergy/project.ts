import { kernelEnd, kernelWidth, type Pass } from './pass.ts';

/** y = Bᵀ(z − μ). */
export function project(pass: Pass, y: Float64Array): void {
  const { z, mean, basis, k } = pass;
  const d = z.length;
  y.fill(0);
  const width = kernelWidth(k);
  const end = kernelEnd(d, k, width);
  if (width === 8) project8(pass, y, end);
  else if (width === 12) project12(pass, y, end);
  for (let i = end, b = end * k; i < d; i++, b += k) {
    const c = z[i] - mean[i];
    for (let j = 0; j < k; j++) y[j] += basis[b + j] * c;
  }
}

/** y[j] += Σ B[i, j] · (z − μ)_i over the pixels i < end, 8 components unrolled (k ≤ 8). */
function project8(pass: Pass, y: Float64Array, end: number): void {
  const { z, mean, basis, k } = pass;
  let y0 = 0, y1 = 0, y2 = 0, y3 = 0, y4 = 0, y5 = 0, y6 = 0, y7 = 0;
  for (let i = 0, b = 0; i < end; i++, b += k) {
    const c = z[i] - mean[i];
    y0 += basis[b] * c;
    y1 += basis[b + 1] * c;
    y2 += basis[b + 2] * c;
    y3 += basis[b + 3] * c;
    y4 += basis[b + 4] * c;
    y5 += basis[b + 5] * c;
    y6 += basis[b + 6] * c;
    y7 += basis[b + 7] * c;
  }
  if (k > 0) y[0] = y0;
  if (k > 1) y[1] = y1;
  if (k > 2) y[2] = y2;
  if (k > 3) y[3] = y3;
  if (k > 4) y[4] = y4;
  if (k > 5) y[5] = y5;
  if (k > 6) y[6] = y6;
  if (k > 7) y[7] = y7;
}

/** y[j] += Σ B[i, j] · (z − μ)_i over the pixels i < end, 12 components unrolled (k ≤ 12). */
function project12(pass: Pass, y: Float64Array, end: number): void {
  const { z, mean, basis, k } = pass;
  let y0 = 0, y1 = 0, y2 = 0, y3 = 0, y4 = 0, y5 = 0, y6 = 0, y7 = 0, y8 = 0, y9 = 0, y10 = 0, y11 = 0;
  for (let i = 0, b = 0; i < end; i++, b += k) {
    const c = z[i] - mean[i];
    y0 += basis[b] * c;
    y1 += basis[b + 1] * c;
    y2 += basis[b + 2] * c;
    y3 += basis[b + 3] * c;
    y4 += basis[b + 4] * c;
    y5 += basis[b + 5] * c;
    y6 += basis[b + 6] * c;
    y7 += basis[b + 7] * c;
    y8 += basis[b + 8] * c;
    y9 += basis[b + 9] * c;
    y10 += basis[b + 10] * c;
    y11 += basis[b + 11] * c;
  }
  if (k > 0) y[0] = y0;
  if (k > 1) y[1] = y1;
  if (k > 2) y[2] = y2;
  if (k > 3) y[3] = y3;
  if (k > 4) y[4] = y4;
  if (k > 5) y[5] = y5;
  if (k > 6) y[6] = y6;
  if (k > 7) y[7] = y7;
  if (k > 8) y[8] = y8;
  if (k > 9) y[9] = y9;
  if (k > 10) y[10] = y10;
  if (k > 11) y[11] = y11;
}
