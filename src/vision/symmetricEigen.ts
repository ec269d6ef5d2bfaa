import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

/** Eigenpairs of a small dense symmetric matrix, largest eigenvalue first. */
export interface SymmetricEigen {
  /** Eigenvalues in descending order. */
  readonly values: Float64Array;
  /** Unit eigenvectors, vector-major: vector j occupies `vectors[j * n .. j * n + n)`. */
  readonly vectors: Float64Array;
}

/**
 * Eigen-decomposition of a symmetric n×n matrix given row-major.
 *
 * The only place the project touches ml-matrix (Householder tridiagonalisation then the QL
 * algorithm, `tred2`/`tql2` of EISPACK as ported by JAMA); everything else stays on typed arrays.
 * ml-matrix mutates in place in many methods, so the input is copied into a fresh Matrix.
 */
export function symmetricEigen(matrix: Float64Array, n: number): SymmetricEigen {
  if (matrix.length !== n * n) throw new RangeError(`matrix has ${matrix.length} entries, expected ${n}×${n}`);
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) rows.push(Array.from(matrix.subarray(i * n, i * n + n)));
  const evd = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true });
  const raw = evd.realEigenvalues;
  const v = evd.eigenvectorMatrix;
  const order = raw.map((_, i) => i).sort((a, b) => raw[b] - raw[a]);
  const values = new Float64Array(n);
  const vectors = new Float64Array(n * n);
  order.forEach((src, j) => {
    values[j] = raw[src];
    for (let i = 0; i < n; i++) vectors[j * n + i] = v.get(i, src);
  });
  return { values, vectors };
}
