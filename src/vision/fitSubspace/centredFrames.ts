import type { CentredFrames } from '../learningKernels.ts';
import { componentMajor } from './componentMajor.ts';
import { gramMatrix } from './gramMatrix.ts';

/**
 * The JS loops of learning, in double precision (the fallback of `learningKernels`): the frames
 * centred on their mean, their Gram matrix, weighted sums and residual squares.
 */
export function centredFrames(frames: readonly Float32Array[], d: number): CentredFrames {
  const mean = meanOf(frames, d);
  const centred = frames.map((f) => {
    const c = new Float32Array(d);
    for (let i = 0; i < d; i++) c[i] = f[i] - mean[i];
    return c;
  });
  return {
    mean,
    gram: () => gramMatrix(centred, d),
    combine(subset, weights, rows) {
      const m = subset.length;
      // Component-major accumulators: each update is one contiguous stream.
      const acc = Array.from({ length: rows }, () => new Float64Array(d));
      for (let t = 0; t < m; t++) {
        const c = centred[subset[t]];
        for (let j = 0; j < rows; j++) {
          const w = weights[j * m + t];
          const u = acc[j];
          for (let i = 0; i < d; i++) u[i] += w * c[i];
        }
      }
      return acc;
    },
    addResidualSquares(subset, offset, basis, k, sumSq) {
      addResidualSquares(subset.map((t) => centred[t]), offset, basis, d, k, sumSq);
    },
    project(subset, columns) {
      const kk = columns.length;
      const out = new Float64Array(subset.length * kk);
      subset.forEach((t, row) => {
        const c = centred[t];
        for (let j = 0; j < kk; j++) {
          const u = columns[j];
          let y = 0;
          for (let i = 0; i < d; i++) y += u[i] * c[i];
          out[row * kk + j] = y;
        }
      });
      return out;
    },
    squaredNorms() {
      return Float64Array.from(centred, (c) => {
        let s = 0;
        for (let i = 0; i < d; i++) s += c[i] * c[i];
        return s;
      });
    },
  };
}

function meanOf(frames: readonly Float32Array[], d: number): Float32Array {
  const sum = new Float64Array(d);
  for (const f of frames) for (let i = 0; i < d; i++) sum[i] += f[i];
  const mean = new Float32Array(d);
  for (let i = 0; i < d; i++) mean[i] = sum[i] / frames.length;
  return mean;
}

/** Adds each (centred) frame's squared residual r_i² against (offset, basis) into sumSq. */
function addResidualSquares(
  frames: readonly Float32Array[],
  offset: Float32Array,
  basis: Float32Array,
  d: number,
  k: number,
  sumSq: Float64Array,
): void {
  const columns = componentMajor(basis, d, k);
  const r = new Float64Array(d);
  for (const f of frames) {
    for (let i = 0; i < d; i++) r[i] = f[i] - offset[i];
    for (let j = 0; j < k; j++) {
      const u = columns[j];
      let y = 0;
      for (let i = 0; i < d; i++) y += u[i] * r[i];
      // Subtracting each component from the running residual (modified Gram–Schmidt order)
      // equals subtracting B·Bᵀc at once, since the columns are orthonormal.
      for (let i = 0; i < d; i++) r[i] -= y * u[i];
    }
    for (let i = 0; i < d; i++) sumSq[i] += r[i] * r[i];
  }
}
