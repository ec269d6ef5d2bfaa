import { symmetricEigen } from './symmetricEigen.ts';

export interface RandomizedEigenOptions {
  /** Block size l: how many vectors are iterated (the wanted count plus oversampling); 1 ≤ l ≤ n. */
  block: number;
  /** Power (subspace) iterations before the Rayleigh–Ritz step, a whole number ≥ 0; default 1. */
  iterations?: number;
  /** Seed of the Gaussian start block; default 1. Ignored when `start` is given. */
  seed?: number;
  /**
   * A start block instead of a random one: `block` vectors of n values, vector-major (vector j at
   * `start[j * n ..]`). It need not be orthonormal.
   */
  start?: Float64Array;
  /**
   * Remove each vector's mean before the product and from the product: the operator is then
   * P A P with P = I − 11ᵀ/n (the Gram matrix of frames centred on their own mean). Default false.
   */
  centre?: boolean;
}

export interface RandomizedEigen {
  /** Ritz values θ_1 ≥ … ≥ θ_l: estimates of the l largest eigenvalues (each at most the true one). */
  readonly values: Float64Array;
  /** Ritz vectors V = Z S, vector-major (l × n), orthonormal. */
  readonly vectors: Float64Array;
  /**
   * The rotation S (l × l, vector-major: Ritz vector j is Σ_i S[j · l + i] z_i) from the last
   * orthonormal block Z = (z_1 … z_l) that `multiply` was called with; a caller that kept its own
   * product with that block (e.g. X Z) rotates it with S.
   */
  readonly rotation: Float64Array;
  /** A Z of the last call, vector-major (l × n): the output of `multiply(Z)` (centred if asked). */
  readonly product: Float64Array;
}

/**
 * The l largest eigenpairs (approximately) of a symmetric positive semi-definite n × n operator A
 * that is only available as a product with a block of vectors (`multiply`), by randomized
 * subspace iteration and a Rayleigh–Ritz step: Z₀ = orth(Ω), Ω Gaussian n × l; Z_{i+1} =
 * orth(A Z_i) for `iterations` steps; then the eigenpairs (θ, s) of T = Zᵀ A Z (l × l) give Ritz
 * values θ and vectors Z s. Halko, Martinsson & Tropp, "Finding structure with randomness"
 * (SIAM Review 53, 2011), Algorithms 4.4 and 5.3 (here on the Gram operator A = XᵀX, whose
 * eigenvectors are the right singular vectors of X); each iteration sharpens the gap by the ratio
 * (λ_{l+1}/λ_j) of the spectrum, so with oversampling (l a few more than wanted) one or two
 * iterations give the leading eigenvalues to a small relative error when the spectrum decays.
 * The orthonormalisations are modified Gram–Schmidt applied twice ("twice is enough"; Giraud et
 * al. 2005), in double precision.
 *
 * Cost: `iterations` + 1 calls of `multiply` with l vectors, plus O(n l²) here.
 *
 * Example: for A = diag(5, 3, 1, 0) and l = 2, two iterations give θ ≈ (5, 3) and vectors ≈ e₁, e₂.
 *
 * @param multiply returns A Z for a block Z of l vectors (vector-major l × n); it must not keep Z.
 * @param n the order of A.
 */
export function randomizedEigen(
  multiply: (block: Float64Array, l: number) => Float64Array,
  n: number,
  options: RandomizedEigenOptions,
): RandomizedEigen {
  const { block: l, iterations = 1, seed = 1, start, centre = false } = options;
  if (!(Number.isInteger(n) && n >= 1)) throw new RangeError(`n must be a whole number ≥ 1, got ${n}`);
  if (!(Number.isInteger(l) && l >= 1 && l <= n)) throw new RangeError(`block must be a whole number from 1 to n = ${n}, got ${l}`);
  if (!(Number.isInteger(iterations) && iterations >= 0)) throw new RangeError(`iterations must be a whole number ≥ 0, got ${iterations}`);
  if (start !== undefined && start.length !== l * n) throw new RangeError(`start has ${start.length} entries, expected ${l}×${n}`);

  let z = start !== undefined ? Float64Array.from(start) : gaussianBlock(l, n, seed);
  if (centre) centreVectors(z, l, n);
  orthonormalise(z, l, n);
  const apply = (block: Float64Array) => {
    const out = multiply(block, l);
    if (out.length !== l * n) throw new RangeError(`multiply returned ${out.length} entries, expected ${l}×${n}`);
    if (centre) centreVectors(out, l, n);
    return out;
  };
  for (let i = 0; i < iterations; i++) {
    z = apply(z);
    orthonormalise(z, l, n);
  }
  const product = apply(z);
  // T = Zᵀ A Z, symmetrised against rounding.
  const t = new Float64Array(l * l);
  for (let a = 0; a < l; a++) {
    for (let b = 0; b <= a; b++) {
      let s1 = 0;
      let s2 = 0;
      for (let p = 0; p < n; p++) {
        s1 += z[a * n + p] * product[b * n + p];
        s2 += z[b * n + p] * product[a * n + p];
      }
      t[a * l + b] = t[b * l + a] = (s1 + s2) / 2;
    }
  }
  const { values, vectors: rotation } = symmetricEigen(t, l);
  const vectors = new Float64Array(l * n);
  for (let j = 0; j < l; j++) {
    for (let i = 0; i < l; i++) {
      const s = rotation[j * l + i];
      if (s === 0) continue;
      for (let p = 0; p < n; p++) vectors[j * n + p] += s * z[i * n + p];
    }
  }
  return { values, vectors, rotation, product };
}

/** l vectors of n standard normal values (Box–Muller on a 32-bit mulberry generator), seeded. */
function gaussianBlock(l: number, n: number, seed: number): Float64Array {
  let state = seed >>> 0;
  const uniform = () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let x = state;
    x = Math.imul(x ^ (x >>> 15), x | 1);
    x ^= x + Math.imul(x ^ (x >>> 7), x | 61);
    return (((x ^ (x >>> 14)) >>> 0) + 0.5) / 4294967296;
  };
  const out = new Float64Array(l * n);
  for (let i = 0; i < out.length; i++) out[i] = Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
  return out;
}

function centreVectors(z: Float64Array, l: number, n: number): void {
  for (let j = 0; j < l; j++) {
    let s = 0;
    for (let p = 0; p < n; p++) s += z[j * n + p];
    s /= n;
    for (let p = 0; p < n; p++) z[j * n + p] -= s;
  }
}

/**
 * Orthonormalises the l vectors in place (modified Gram–Schmidt, twice). A vector that vanishes
 * against the earlier ones (A of rank below l) becomes zero, and its Ritz value then zero too.
 */
function orthonormalise(z: Float64Array, l: number, n: number): void {
  for (let j = 0; j < l; j++) {
    let before = 0;
    for (let p = 0; p < n; p++) before += z[j * n + p] * z[j * n + p];
    for (let pass = 0; pass < 2; pass++) {
      for (let q = 0; q < j; q++) {
        let dot = 0;
        for (let p = 0; p < n; p++) dot += z[j * n + p] * z[q * n + p];
        for (let p = 0; p < n; p++) z[j * n + p] -= dot * z[q * n + p];
      }
    }
    let norm = 0;
    for (let p = 0; p < n; p++) norm += z[j * n + p] * z[j * n + p];
    const scale = norm > before * 1e-24 && norm > 0 ? 1 / Math.sqrt(norm) : 0;
    for (let p = 0; p < n; p++) z[j * n + p] *= scale;
  }
}
