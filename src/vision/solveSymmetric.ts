/**
 * Solves A x = b for symmetric positive definite A (lower triangle given, row-major k×k) by
 * Cholesky decomposition; writes x and returns true, or returns false when A is not positive
 * definite (then x is untouched).
 */
export function solveSymmetric(a: Float64Array, b: Float64Array, k: number, x: Float64Array): boolean {
  const l = new Float64Array(k * k);
  for (let i = 0; i < k; i++) {
    for (let j = 0; j <= i; j++) {
      let s = a[i * k + j];
      for (let p = 0; p < j; p++) s -= l[i * k + p] * l[j * k + p];
      if (i === j) {
        if (!(s > 1e-9)) return false;
        l[i * k + i] = Math.sqrt(s);
      } else {
        l[i * k + j] = s / l[j * k + j];
      }
    }
  }
  const t = new Float64Array(k);
  for (let i = 0; i < k; i++) {
    let s = b[i];
    for (let p = 0; p < i; p++) s -= l[i * k + p] * t[p];
    t[i] = s / l[i * k + i];
  }
  for (let i = k - 1; i >= 0; i--) {
    let s = t[i];
    for (let p = i + 1; p < k; p++) s -= l[p * k + i] * x[p];
    x[i] = s / l[i * k + i];
  }
  return true;
}
