/**
 * The left-out pixels of one robust step, gathered in runs of `outlierRun` (their basis rows,
 * then z − μ) and subtracted from the normal equations: normal = I − B_Oᵀ B_O and
 * rhs = Bᵀ(z − μ) − B_Oᵀ(z − μ)_O.
 */
export class Outliers {
  private run = 0;
  private readonly gathered: Float64Array;

  constructor(
    private readonly basis: Float32Array,
    private readonly k: number,
    readonly normal: Float64Array,
    readonly rhs: Float64Array,
    /** BᵀB when it is not the identity (a pixel sample). */
    private readonly gram?: Float64Array,
  ) {
    this.gathered = new Float64Array(outlierRun * (k + 1));
  }

  /** Starts a step: normal = BᵀB (I for the full orthonormal basis), rhs = full. */
  reset(full: Float64Array): void {
    const { k, normal, rhs, gram } = this;
    if (gram !== undefined) normal.set(gram);
    else {
      normal.fill(0);
      for (let j = 0; j < k; j++) normal[j * k + j] = 1;
    }
    rhs.set(full);
    this.run = 0;
  }

  add(i: number, c: number): void {
    const { k, basis, gathered } = this;
    const g = this.run * (k + 1);
    for (let j = 0, b = i * k; j < k; j++, b++) gathered[g + j] = basis[b];
    gathered[g + k] = c;
    if (++this.run === outlierRun) this.flush();
  }

  /** Subtracts the gathered run. */
  flush(): void {
    if (this.run > 0) subtractOuter(this.gathered, this.run, this.k, this.normal, this.rhs);
    this.run = 0;
  }
}

/** Left-out pixels gathered before their products are subtracted from the normal equations. */
const outlierRun = 64;

/**
 * normal[p·k + q] −= Σ_o g[o, p] · g[o, q] for q ≤ p, and rhs[p] −= Σ_o g[o, p] · g[o, k], over
 * the `m` gathered rows g[o, ·] (stride k + 1), each sum taken in row order as the per-pixel
 * loop would; four entries at a time share the pass over the rows.
 */
function subtractOuter(gathered: Float64Array, m: number, k: number, normal: Float64Array, rhs: Float64Array): void {
  const stride = k + 1;
  for (let p = 0; p < k; p++) {
    const row = p * k;
    let q = 0;
    for (; q + 3 <= p; q += 4) {
      let a0 = normal[row + q], a1 = normal[row + q + 1], a2 = normal[row + q + 2], a3 = normal[row + q + 3];
      for (let o = 0, g = 0; o < m; o++, g += stride) {
        const bp = gathered[g + p];
        a0 -= bp * gathered[g + q];
        a1 -= bp * gathered[g + q + 1];
        a2 -= bp * gathered[g + q + 2];
        a3 -= bp * gathered[g + q + 3];
      }
      normal[row + q] = a0, normal[row + q + 1] = a1, normal[row + q + 2] = a2, normal[row + q + 3] = a3;
    }
    // The rest of the row (at most 3 entries up to the diagonal) together with rhs[p].
    let r = rhs[p];
    let a0 = q <= p ? normal[row + q] : 0, a1 = q + 1 <= p ? normal[row + q + 1] : 0, a2 = q + 2 <= p ? normal[row + q + 2] : 0;
    const left = p - q + 1;
    for (let o = 0, g = 0; o < m; o++, g += stride) {
      const bp = gathered[g + p];
      r -= bp * gathered[g + k];
      if (left > 0) a0 -= bp * gathered[g + q];
      if (left > 1) a1 -= bp * gathered[g + q + 1];
      if (left > 2) a2 -= bp * gathered[g + q + 2];
    }
    rhs[p] = r;
    if (left > 0) normal[row + q] = a0;
    if (left > 1) normal[row + q + 1] = a1;
    if (left > 2) normal[row + q + 2] = a2;
  }
}
