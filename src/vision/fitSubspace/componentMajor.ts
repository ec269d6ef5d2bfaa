/** The k columns of a pixel-major basis as separate arrays. */
export function componentMajor(basis: Float32Array, d: number, k: number): Float32Array[] {
  return Array.from({ length: k }, (_, j) => {
    const u = new Float32Array(d);
    for (let i = 0, b = j; i < d; i++, b += k) u[i] = basis[b];
    return u;
  });
}
