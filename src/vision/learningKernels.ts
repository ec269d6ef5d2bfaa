import { readFileSync } from 'node:fs';

/** Block side of the kernels: frames per Gram block side, components per group (kernels/wat/learning/*.wat). */
const BLOCK = 4;
/** Pixels per tile whose products `gram` and `project` sum in f32 lanes before adding them in f64. */
const PIXEL_TILE = 256;
/** Frames per tile whose terms `combine` and `residual` sum in f32 lanes before adding them in f64. */
const FRAME_TILE = 32;
/** Largest working memory the kernels are given, bytes; bigger learning sets take the JS loops. */
const MAX_BYTES = 1 << 30;

/**
 * The centred learning frames and the operations of learning on them. fitSubspace has two
 * implementations: `learningKernels` (WebAssembly SIMD) and its own JS loops (the fallback).
 */
export interface CentredFrames {
  /** The per-pixel mean of the frames (d values), already subtracted from them: c_t = x_t − mean. */
  readonly mean: Float32Array;
  /** G = XᵀX of the n centred frames, n × n row-major, symmetric. */
  gram(): Float64Array;
  /**
   * Weighted sums s_j = Σ_t w_jt c_subset[t] for j < rows: `weights` is rows × m row-major
   * (m = subset.length); returns `rows` arrays of d values.
   */
  combine(subset: readonly number[], weights: Float64Array, rows: number): Float64Array[];
  /**
   * Adds, for each frame c of the subset, the squared residual r_i² of r = (c − offset) −
   * B Bᵀ(c − offset) into sumSq (d values), B the d × k pixel-major basis (orthonormal columns).
   */
  addResidualSquares(subset: readonly number[], offset: Float32Array, basis: Float32Array, k: number, sumSq: Float64Array): void;
  /**
   * Coefficients y_tj = u_j · c_subset[t] of the subset's frames on the `columns` (at most maxRows
   * arrays of d values, any norm): m × columns.length, frame-major.
   */
  project(subset: readonly number[], columns: readonly Float64Array[]): Float64Array;
  /** ‖c_t‖² of every centred frame (n values). */
  squaredNorms(): Float64Array;
}

export interface LearningKernelsOptions {
  /**
   * Largest `rows` a combine call and largest `k` an addResidualSquares call will ask for (the
   * working memory is reserved for it); a whole number ≥ 0, default 13 (12 components and a mean).
   */
  maxRows?: number;
}

interface Exports {
  centre(frames: number, n: number, d: number, sums: number, mean: number): void;
  gram(frames: number, n: number, d: number, tile: number, out: number): void;
  combine(rows: number, m: number, weights: number, k: number, d: number, tile: number, out: number): void;
  project(rows: number, m: number, offset: number, basis: number, k: number, d: number, tile: number, out: number): void;
  residual(rows: number, m: number, offset: number, basis: number, k: number, d: number, coefficients: number, tile: number, out: number): void;
}

interface Kernel {
  readonly memory: WebAssembly.Memory;
  readonly run: Exports;
}

let kernel: Kernel | null | undefined;
let enabled = true;
/** The session whose frames are in the kernel memory now (one per thread). */
let current: object | undefined;

/** The kernels of this thread, instantiated on first use; null where WebAssembly SIMD is missing. */
function loadKernel(): Kernel | null {
  if (kernel !== undefined) return kernel;
  try {
    const bytes = readFileSync(new URL('./kernels/learning.wasm', import.meta.url));
    const memory = new WebAssembly.Memory({ initial: 1 });
    const instance = new WebAssembly.Instance(new WebAssembly.Module(bytes), { env: { memory } });
    kernel = { memory, run: instance.exports as unknown as Exports };
  } catch {
    kernel = null;
  }
  return kernel;
}

/**
 * Turns the WebAssembly kernels off (false) or on again (true, the default) for this thread:
 * `learningKernels` and `countingKernels` then return undefined, and fitSubspace and new
 * counters take their JS loops. For tests and benchmarks that compare the two paths.
 */
export function setKernelsEnabled(on: boolean): void {
  enabled = on;
}

/** Whether the WebAssembly kernels are on for this thread (see setKernelsEnabled). */
export function kernelsEnabled(): boolean {
  return enabled;
}

const up = (x: number, to: number) => Math.ceil(x / to) * to;

/**
 * Loads n learning frames of d pixels once into the memory of the WebAssembly SIMD kernels built
 * from kernels/wat/learning/*.wat, centres them there, and returns the learning operations on them
 * (`CentredFrames`), four pixels per instruction. The frames given are not changed.
 *
 * Precision (f32 lanes, long sums split into tiles added in f64):
 * - `mean` and the centring: f64 sums in frame order, the same operations as the JS loops, so the
 *   same values bit for bit;
 * - `gram`: products of the f32 frames summed in f32 lanes over tiles of 256 pixels (64 products
 *   a lane), tiles added in f64: each entry within about 1e-6 of √(G_aa G_bb) (measured: below
 *   1e-7 for 200 frames of 20 000 pixels);
 * - `combine`: weights rounded to f32 (6e-8), products summed in f32 over tiles of 32 frames,
 *   tiles added in f64: each s_ji within about 1e-6 of Σ_t |w_jt c_ti| (measured: below 2e-7);
 * - `addResidualSquares`: the coefficients y = Bᵀ(c − offset) as in gram (within about 1e-6 of
 *   ‖c − offset‖), r = c − offset − B y in f32 (within about 1e-7 of |c − offset| + Σ_j |y_j b_ij|,
 *   some 1e-5 grey levels), r² summed in f32 over tiles of 32 frames, tiles added in f64: each
 *   sum of squares within about 1e-5 relative where the residual is a thousandth of the frame
 *   (measured: 7e-6).
 * On a whole fit (fitSubspace's test, 75 frames of the synthetic reading room) the two paths
 * give eigenvalues within 1e-6 relative and noise levels within 4e-7 relative; the tests hold
 * them to 1e-5 and 1e-4, and the eigen-images to 1e-3 rad of principal angle. Eigen-images past
 * a near-tie of eigenvalues (noise directions) turn with any rounding, in either path.
 *
 * Returns undefined when the kernels cannot run here (no WebAssembly SIMD), are turned off
 * (`setKernelsEnabled(false)`), or would need more than 1 GiB of working memory; the caller then
 * takes its JS loops. One session per thread at a time: loading new frames makes the previous
 * session's operations throw. The memory stays allocated for the thread's lifetime and is reused.
 *
 * Example: `learningKernels([Float32Array.of(1, 2), Float32Array.of(3, 6)], 2)` has mean (2, 4),
 * and its `gram()` is [5, −5, −5, 5].
 *
 * @param frames n ≥ 1 pixel vectors of d values each.
 */
export function learningKernels(
  frames: readonly Float32Array[],
  d: number,
  options: LearningKernelsOptions = {},
): CentredFrames | undefined {
  const { maxRows = 13 } = options;
  if (!(Number.isInteger(maxRows) && maxRows >= 0)) throw new RangeError(`maxRows must be a whole number ≥ 0, got ${maxRows}`);
  const n = frames.length;
  frames.forEach((f, t) => {
    if (f.length !== d) throw new RangeError(`frame ${t} has ${f.length} pixels, expected ${d}`);
  });
  const k = enabled ? loadKernel() : null;
  if (k === null || n === 0 || d === 0) return undefined;

  const np = up(n, BLOCK);
  const dp = up(d, 8);
  const r4 = up(maxRows, BLOCK);
  const frameBytes = np * dp * 4;
  const meanAt = frameBytes;
  const scratch = meanAt + dp * 4;
  const gramBytes = np * np * 8;
  const combineBytes = r4 * dp * 8 + up(n * r4 * 4, 16) + up(n * 4, 16);
  const residualBytes = r4 * dp * 4 + dp * 4 + dp * 8 + np * r4 * 8 + up(n * r4 * 4, 16) + np * 4;
  // project's columns, offset, coefficients and row table fit within residualBytes.
  const bytes = scratch + Math.max(gramBytes, combineBytes, residualBytes);
  if (bytes > MAX_BYTES) return undefined;
  const pages = Math.ceil(bytes / 65536);
  const have = k.memory.buffer.byteLength / 65536;
  if (pages > have) k.memory.grow(pages - have);
  // The memory does not grow again during this session, so these views stay valid.
  const heap = k.memory.buffer;
  const f32 = new Float32Array(heap);
  const f64 = new Float64Array(heap);
  const i32 = new Int32Array(heap);

  for (let t = 0; t < np; t++) {
    if (t < n) {
      f32.set(frames[t], t * dp);
      f32.fill(0, t * dp + d, (t + 1) * dp);
    } else f32.fill(0, t * dp, (t + 1) * dp);
  }
  k.run.centre(0, n, dp, scratch, meanAt);
  const mean = f32.slice(meanAt / 4, meanAt / 4 + d);

  const session = {};
  current = session;
  const check = () => {
    if (current !== session) throw new Error('these learning frames were replaced in the kernel memory by a later learningKernels call');
  };
  /** Bump allocation in the scratch area, 16-byte aligned; `reset` before each operation. */
  let cursor = scratch;
  const reset = () => (cursor = scratch);
  const alloc = (size: number) => {
    const at = cursor;
    cursor += up(size, 16);
    return at;
  };
  const rowTable = (subset: readonly number[], length: number) => {
    const at = alloc(length * 4);
    for (let t = 0; t < length; t++) {
      const s = subset[t] ?? subset[0];
      if (!(Number.isInteger(s) && s >= 0 && s < n)) throw new RangeError(`subset entry ${t} is ${s}, not a frame index below ${n}`);
      i32[at / 4 + t] = s * dp * 4;
    }
    return at;
  };

  return {
    mean,

    gram() {
      check();
      reset();
      const out = alloc(np * np * 8);
      f64.fill(0, out / 8, out / 8 + np * np);
      k.run.gram(0, np, dp, PIXEL_TILE, out);
      const gram = new Float64Array(n * n);
      for (let a = 0; a < n; a++) {
        for (let b = 0; b <= a; b++) gram[a * n + b] = gram[b * n + a] = f64[out / 8 + a * np + b];
      }
      return gram;
    },

    combine(subset, weights, rows) {
      check();
      const m = subset.length;
      if (rows > maxRows) throw new RangeError(`rows ${rows} is more than the maxRows ${maxRows} reserved`);
      if (weights.length !== rows * m) throw new RangeError(`weights has ${weights.length} entries, expected ${rows}×${m}`);
      if (rows === 0) return [];
      const k4 = up(rows, BLOCK);
      reset();
      const out = alloc(k4 * dp * 8);
      const w = alloc(m * k4 * 4);
      const table = rowTable(subset, m);
      f64.fill(0, out / 8, out / 8 + k4 * dp);
      f32.fill(0, w / 4, w / 4 + m * k4);
      for (let j = 0; j < rows; j++) for (let t = 0; t < m; t++) f32[w / 4 + t * k4 + j] = weights[j * m + t];
      if (m > 0) k.run.combine(table, m, w, k4, dp, FRAME_TILE, out);
      return Array.from({ length: rows }, (_, j) => f64.slice(out / 8 + j * dp, out / 8 + j * dp + d));
    },

    addResidualSquares(subset, offset, basis, kk, sumSq) {
      check();
      const m = subset.length;
      if (kk > maxRows) throw new RangeError(`k ${kk} is more than the maxRows ${maxRows} reserved`);
      if (basis.length !== d * kk) throw new RangeError(`basis has ${basis.length} entries, expected ${d}×${kk}`);
      if (offset.length !== d || sumSq.length !== d) throw new RangeError(`offset and sumSq must have ${d} entries`);
      if (m === 0) return;
      const k4 = up(kk, BLOCK);
      const m4 = up(m, BLOCK);
      reset();
      const columns = alloc(k4 * dp * 4);
      const delta = alloc(dp * 4);
      const sums = alloc(dp * 8);
      const y = alloc(m4 * k4 * 8);
      const coefficients = alloc(m * k4 * 4);
      const table = rowTable(subset, m4);
      // The basis component-major (each column one contiguous stream), padded with zeros.
      f32.fill(0, columns / 4, columns / 4 + k4 * dp);
      for (let j = 0; j < kk; j++) {
        const row = columns / 4 + j * dp;
        for (let i = 0, b = j; i < d; i++, b += kk) f32[row + i] = basis[b];
      }
      f32.set(offset, delta / 4);
      f32.fill(0, delta / 4 + d, delta / 4 + dp);
      f64.fill(0, y / 8, y / 8 + m4 * k4);
      if (k4 > 0) k.run.project(table, m4, delta, columns, k4, dp, PIXEL_TILE, y);
      for (let t = 0; t < m; t++) for (let j = 0; j < k4; j++) f32[coefficients / 4 + t * k4 + j] = f64[y / 8 + t * k4 + j];
      f64.fill(0, sums / 8, sums / 8 + dp);
      k.run.residual(table, m, delta, columns, k4, dp, coefficients, FRAME_TILE, sums);
      for (let i = 0; i < d; i++) sumSq[i] += f64[sums / 8 + i];
    },

    project(subset, given) {
      check();
      const m = subset.length;
      const kk = given.length;
      if (kk > maxRows) throw new RangeError(`${kk} columns is more than the maxRows ${maxRows} reserved`);
      given.forEach((u, j) => {
        if (u.length !== d) throw new RangeError(`column ${j} has ${u.length} entries, expected ${d}`);
      });
      const out = new Float64Array(m * kk);
      if (m === 0 || kk === 0) return out;
      const k4 = up(kk, BLOCK);
      const m4 = up(m, BLOCK);
      reset();
      const columns = alloc(k4 * dp * 4);
      const delta = alloc(dp * 4);
      const y = alloc(m4 * k4 * 8);
      const table = rowTable(subset, m4);
      f32.fill(0, columns / 4, columns / 4 + k4 * dp);
      for (let j = 0; j < kk; j++) f32.set(given[j], columns / 4 + j * dp);
      f32.fill(0, delta / 4, delta / 4 + dp);
      f64.fill(0, y / 8, y / 8 + m4 * k4);
      k.run.project(table, m4, delta, columns, k4, dp, PIXEL_TILE, y);
      for (let t = 0; t < m; t++) for (let j = 0; j < kk; j++) out[t * kk + j] = f64[y / 8 + t * k4 + j];
      return out;
    },

    squaredNorms() {
      check();
      const norms = new Float64Array(n);
      for (let t = 0; t < n; t++) {
        let s = 0;
        for (let i = t * dp, end = t * dp + d; i < end; i++) s += f32[i] * f32[i];
        norms[t] = s;
      }
      return norms;
    },
  };
}
