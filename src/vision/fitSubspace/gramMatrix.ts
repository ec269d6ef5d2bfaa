/**
 * G = XᵀX in JS: blocks of 4×4 frame pairs over pixel tiles, so each loaded pixel value serves
 * four products and a tile of every frame stays in cache while all pairs use it.
 */
export function gramMatrix(centred: readonly Float32Array[], d: number): Float64Array {
  const n = centred.length;
  const gram = new Float64Array(n * n);
  const zero = new Float32Array(d);
  const padded = n + ((4 - (n % 4)) % 4);
  const x = Array.from({ length: padded }, (_, t) => centred[t] ?? zero);
  const tile = 1024;
  for (let p0 = 0; p0 < d; p0 += tile) {
    const p1 = Math.min(d, p0 + tile);
    for (let a = 0; a < padded; a += 4) {
      const a0 = x[a], a1 = x[a + 1], a2 = x[a + 2], a3 = x[a + 3];
      for (let b = 0; b <= a; b += 4) {
        const b0 = x[b], b1 = x[b + 1], b2 = x[b + 2], b3 = x[b + 3];
        let s00 = 0, s01 = 0, s02 = 0, s03 = 0, s10 = 0, s11 = 0, s12 = 0, s13 = 0;
        let s20 = 0, s21 = 0, s22 = 0, s23 = 0, s30 = 0, s31 = 0, s32 = 0, s33 = 0;
        for (let p = p0; p < p1; p++) {
          const u0 = a0[p], u1 = a1[p], u2 = a2[p], u3 = a3[p];
          const v0 = b0[p], v1 = b1[p], v2 = b2[p], v3 = b3[p];
          s00 += u0 * v0; s01 += u0 * v1; s02 += u0 * v2; s03 += u0 * v3;
          s10 += u1 * v0; s11 += u1 * v1; s12 += u1 * v2; s13 += u1 * v3;
          s20 += u2 * v0; s21 += u2 * v1; s22 += u2 * v2; s23 += u2 * v3;
          s30 += u3 * v0; s31 += u3 * v1; s32 += u3 * v2; s33 += u3 * v3;
        }
        const sums = [s00, s01, s02, s03, s10, s11, s12, s13, s20, s21, s22, s23, s30, s31, s32, s33];
        for (let i = 0; i < 4; i++) {
          for (let j = 0; j < 4; j++) {
            const r = a + i, c = b + j;
            if (r < n && c < n && c <= r) gram[r * n + c] += sums[i * 4 + j];
          }
        }
      }
    }
  }
  for (let a = 0; a < n; a++) for (let b = 0; b < a; b++) gram[b * n + a] = gram[a * n + b];
  return gram;
}
