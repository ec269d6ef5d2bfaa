/** A y for symmetric A (lower triangle given, row-major k×k). */
export function symmetricTimes(a: Float64Array, y: Float64Array, k: number): Float64Array {
  const out = new Float64Array(k);
  for (let p = 0; p < k; p++) {
    let sum = 0;
    for (let q = 0; q < k; q++) sum += (q <= p ? a[p * k + q] : a[q * k + p]) * y[q];
    out[p] = sum;
  }
  return out;
}
