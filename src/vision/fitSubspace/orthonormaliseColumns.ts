/** Modified Gram–Schmidt on the k pixel-major columns, in double precision. */
export function orthonormaliseColumns(basis: Float32Array, d: number, k: number): void {
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
