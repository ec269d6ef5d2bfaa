import { readFileSync } from 'node:fs';
import type { GreyFrame } from '../domain/frame.ts';
import { outputBitMask, wordsPerRow, type BitMask } from './bitMask.ts';
import { chiSquare1Median } from './frameNoiseScale.ts';
import { kernelsEnabled } from './learningKernels.ts';
import { quickselect } from './quickselect.ts';
import type { CoefficientSample } from './residualEnergy/coefficientSample.ts';
import { settled } from './residualEnergy/robustProject.ts';
import { scaleStride } from './residualEnergy/samplePass.ts';
import { symmetricTimes } from './symmetricTimes.ts';
import { solveSymmetric } from './solveSymmetric.ts';
import type { Subspace } from './subspace.ts';

/** Histogram bins of the `select` kernel: the top 12 bits of a Float32 (kernels/wat/counting/select.wat clears and scans this many). */
export const SELECT_BINS = 4096;

/**
 * The largest number of components a model may have (six groups of four): the kernels have a
 * variant for each group count up to it, and fitSubspace refuses to learn more. Each component
 * adds a plane of the basis that every frame's residual pass reads (4 bytes a pixel), so the
 * per-frame cost grows with k; 24 keeps it below MOG2's at 320×240 (README, speed).
 */
export const MAX_KERNEL_COMPONENTS = 24;

export interface CountingKernelsOptions {
  /** The coordinates' pixel sample (sampleCoefficientPixels of the same model); required. */
  coefficientSample: CoefficientSample;
  /** Foreground threshold per pixel, noise units, width × height (see thresholdResidual); required. */
  thresholds: Float32Array;
  /** The pixel itself must exceed this share of its threshold, 0..1 (see thresholdResidual); default 0.5. */
  pixelShare?: number;
  /**
   * Copy the model's mean into the kernels' layout on every frame (true, the default: a mean
   * changed in place is followed at once), or only on creation and `refreshMean()` (false: one
   * pass over the pixels less per frame, for a caller that says when it changed the mean).
   */
  followMean?: boolean;
}

export interface KernelResidualOptions {
  /** Robust projection steps after the plain one, whole number ≥ 0; default 3 (as residualEnergy). */
  robustSteps?: number;
  /** Pixels above this many noise units (times the sample's noise scale) are left out, > 0; default 3. */
  robustCutoff?: number;
}

/** The per-frame figures of residualEnergy, without the per-pixel energy (it stays in the kernels' memory). */
export interface KernelResidual {
  /** The robust coordinates y of the frame's background, length k (the kernels' own buffer). */
  readonly coefficients: Float64Array;
  /** Σ r_i², grey levels². */
  readonly dffs: number;
  /** Σ y_j² / λ_j. */
  readonly difs: number;
  /** Mean of (r_i / σ_i)² over the frame. */
  readonly normalisedEnergy: number;
  /** Share of the sampled pixels left out of the last robust step. */
  readonly outlierShare: number;
}

/** The per-frame stages of a subspace counter, from frame to packed foreground mask, in WebAssembly SIMD. */
export interface CountingKernels {
  /** Bytes of the kernels' own memory (the model's copy in kernel layout and the per-frame buffers). */
  readonly memoryBytes: number;
  /** Loads the frame, solves the robust coordinates on the pixel sample and computes (r/σ)² at every pixel. */
  residual(frame: GreyFrame, options?: KernelResidualOptions): KernelResidual;
  /** frameNoiseScale of the last residual: the median (r/σ)² of every 7th pixel over the median of χ²₁. */
  noiseScale(): number;
  /** The foreground of the last residual as thresholdResidual with radius 1 would mark it, packed into `out`. */
  threshold(noiseScale: number, out?: BitMask): BitMask;
  /**
   * Takes the model's basis again after it was changed in place (and its coefficient sample
   * refreshed, refreshCoefficientSample): rewrites the component planes in this memory, nothing
   * allocated.
   */
  refreshBasis(): void;
  /** Takes the model's mean again after it was changed in place (needed only with `followMean: false`). */
  refreshMean(): void;
}

type Exports = Record<`residual_g${number}`, ResidualKernel> & Record<`project_g${number}`, ProjectKernel> & Record<`robust_g${number}`, RobustKernel> & {
  gather(src: number, index: number, n: number, dst: number): void;
  pad(src: number, width: number, rows: number, stride: number, dst: number): void;
  select(values: number, n: number, kth: number, hist: number, out: number, result: number): void;
  threshold(v: number, h: number, stride: number, rows: number, words: number, tn: number, ts: number, scale: number, bits: number): void;
};
type ResidualKernel = (n: number, z: number, mean: number, basis: number, plane: number, y: number, weight: number, norm: number, sums: number) => void;
type RobustKernel = (n: number, z: number, mean: number, basis: number, plane: number, y: number, weight: number, limit: number, left: number, acc: number, outer: number, rhs: number) => number;
type ProjectKernel = (n: number, z: number, mean: number, basis: number, plane: number, out: number) => void;

let compiled: WebAssembly.Module | null | undefined;

/** The counting module (kernels/counting.wasm, built from kernels/wat/counting/*.wat), compiled once per thread; null where WebAssembly SIMD is missing. */
export function countingModule(): WebAssembly.Module | null {
  if (compiled !== undefined) return compiled;
  try {
    compiled = new WebAssembly.Module(readFileSync(new URL('./kernels/counting.wasm', import.meta.url)));
  } catch {
    compiled = null;
  }
  return compiled;
}

/** Bump allocation of 16-byte aligned Float32 / Int32 / Float64 regions in one memory. */
class Layout {
  bytes = 16; // address 0 stays unused
  take(count: number, size = 4): number {
    const at = this.bytes;
    this.bytes += Math.ceil((count * size) / 16) * 16;
    return at;
  }
}

const up4 = (n: number) => Math.ceil(n / 4) * 4;

/**
 * The per-frame work of createCounter — residualEnergy with a pixel sample, frameNoiseScale and
 * thresholdResidual (radius 1) — as WebAssembly SIMD kernels (kernels/wat/counting/*.wat) on
 * one counter's own memory, writing the foreground as a packed mask ({@link BitMask}) for the
 * bitmapped morphology and the run labelling that follow.
 *
 * The method is that of the JS stages, step for step: the robust coordinates of the frame's
 * background from the sample (Leonardis & Bischof 2000, see residualEnergy), then at every pixel
 * r = (z − μ) − B y and v = r² / σ², the noise scale from every 7th v, and the 3×3 box mean of v
 * against the per-pixel threshold with the pixel's own check. What differs is the arithmetic:
 * r and v in f32 lanes (the JS loops use f64), y rounded to f32 for the residual, sums in f32
 * over 256 pixels added in f64, and the box mean compared as s > t² · n rather than s / n > t².
 * A pixel whose v lies within a few units in the seventh digit of its threshold can therefore
 * fall on the other side; the tests bound how many.
 *
 * Layout in the kernels' memory: each image row padded to a stride of max(32 · ⌈width / 32⌉,
 * 4 · ⌈(width + 1) / 4⌉) values (whole words of the packed mask, and a row always ends in at
 * least one zero, the left neighbour of the next row's first pixel), the component planes of the basis one after the other (k rounded up to a multiple of
 * 4, the extra planes and coordinates 0), and v with a zero guard row above and below.
 *
 * The model's mean is copied in on every frame, so a mean changed in place (createDriftingCounter)
 * is followed; the basis and noise are copied once, and a basis changed in place is taken again
 * by `refreshBasis` (after its coefficient sample is refreshed).
 *
 * Returns undefined where the kernels cannot run (no WebAssembly SIMD; turned off with
 * setKernelsEnabled(false); k = 0); the counter then takes the JS stages. Throws for a model of
 * more than MAX_KERNEL_COMPONENTS components (fitSubspace does not learn one).
 */
export function countingKernels(model: Subspace, options: CountingKernelsOptions): CountingKernels | undefined {
  const { coefficientSample: sample, thresholds, pixelShare = 0.5, followMean = true } = options;
  const { width, height, components: k, basis, noise, eigenvalues } = model;
  const d = width * height;
  if (k > MAX_KERNEL_COMPONENTS) {
    throw new RangeError(`components: the model has ${k}, the counter takes at most ${MAX_KERNEL_COMPONENTS}; learn it again with fewer`);
  }
  if (thresholds.length !== d) throw new RangeError(`thresholds has length ${thresholds.length}, expected ${d}`);
  if (sample.basis !== basis) throw new RangeError('coefficientSample was built for another model');
  if (!(pixelShare >= 0 && pixelShare <= 1)) throw new RangeError(`pixelShare: expected a share in 0..1, got ${String(pixelShare)}`);
  if (k === 0 || !kernelsEnabled()) return undefined;
  const module = countingModule();
  if (module === null) return undefined;

  const groups = Math.ceil(k / 4);
  const kp = 4 * groups;
  const words = wordsPerRow(width);
  // Rows padded to whole words of the packed mask and at least one zero past the width.
  const stride = Math.max(32 * words, up4(width + 1));
  const n = height * stride;
  const ns = sample.pixels.length;
  const ns4 = up4(ns);
  // The robust steps' noise scale is taken on every 7th pixel of the sample (as residualEnergy's).
  const nss = Math.ceil(ns / scaleStride);
  const nss4 = up4(nss);
  const noiseCount = Math.ceil(d / scaleStride);

  const layout = new Layout();
  const at = {
    z: layout.take(n),
    mean: layout.take(n),
    // The frame and the mean as given (rows of `width`), before pad lays them out.
    zRaw: layout.take(d),
    meanRaw: layout.take(d),
    weight: layout.take(n),
    tn: layout.take(n),
    ts: layout.take(n),
    basis: layout.take(kp * n),
    // v and its work array h, each with 4 values and a row of zeros before and after.
    v: layout.take(n + 2 * stride + 8) + 4 * (4 + stride),
    h: layout.take(n + 2 * stride + 8) + 4 * (4 + stride),
    bits: layout.take(height * words),
    y: layout.take(kp),
    sums: layout.take(2, 8),
    projected: layout.take(kp, 8),
    outer: layout.take(kp * kp, 8),
    outerRhs: layout.take(kp, 8),
    left: layout.take(ns4),
    acc: layout.take(4 * ((kp * (kp + 1)) / 2 + kp)),
    sampleIndex: layout.take(ns),
    noiseIndex: layout.take(noiseCount),
    noiseSample: layout.take(noiseCount),
    hist: layout.take(SELECT_BINS),
    selected: layout.take(Math.max(noiseCount, nss)),
    selectResult: layout.take(2),
    stepIndex: layout.take(nss),
    zSS: layout.take(nss4),
    meanSS: layout.take(nss4),
    weightSS: layout.take(nss4),
    normSS: layout.take(nss4),
    basisSS: layout.take(kp * nss4),
    zS: layout.take(ns4),
    meanS: layout.take(ns4),
    weightS: layout.take(ns4),
    basisS: layout.take(kp * ns4),
  };
  let memory: WebAssembly.Memory;
  let run: Exports;
  try {
    memory = new WebAssembly.Memory({ initial: Math.ceil(layout.bytes / 65536) });
    run = new WebAssembly.Instance(module, { env: { memory } }).exports as unknown as Exports;
  } catch {
    return undefined;
  }
  const f32 = (address: number, length: number) => new Float32Array(memory.buffer, address, length);
  const zRaw = f32(at.zRaw, d);
  const meanRaw = f32(at.meanRaw, d);
  const zS = f32(at.zS, ns);
  const meanS = f32(at.meanS, ns);
  const outer = new Float64Array(memory.buffer, at.outer, kp * kp);
  const outerRhs = new Float64Array(memory.buffer, at.outerRhs, kp);
  const left = new Int32Array(memory.buffer, at.left, ns4);
  const selected = f32(at.selected, Math.max(noiseCount, nss));
  const selectResult = new Int32Array(memory.buffer, at.selectResult, 2);
  const yKernel = f32(at.y, kp);
  const sums = new Float64Array(memory.buffer, at.sums, 2);
  const projected = new Float64Array(memory.buffer, at.projected, kp);
  const bitWords = new Int32Array(memory.buffer, at.bits, height * words);

  const planes = f32(at.basis, kp * n);
  const planesS = f32(at.basisS, kp * ns4);
  const planesSS = f32(at.basisSS, kp * nss4);
  // Once per model: the noise weights, the thresholds, the sample's indices.
  {
    const weight = f32(at.weight, n);
    const tn = f32(at.tn, n).fill(Infinity);
    const ts = f32(at.ts, n);
    const share2 = pixelShare * pixelShare;
    for (let y = 0; y < height; y++) {
      const ny = Math.min(y + 1, height - 1) - Math.max(y - 1, 0) + 1;
      for (let x = 0; x < width; x++) {
        const i = y * width + x;
        const p = y * stride + x;
        weight[p] = 1 / (noise[i] * noise[i]);
        const nx = Math.min(x + 1, width - 1) - Math.max(x - 1, 0) + 1;
        const t2 = thresholds[i] * thresholds[i];
        tn[p] = t2 * nx * ny;
        // Without the pixel's own check (share 0) every pixel passes it: v ≥ 0 > −1.
        ts[p] = share2 === 0 ? -1 : t2 * share2;
      }
    }
    const weightS = f32(at.weightS, ns);
    const padded = (i: number) => Math.floor(i / width) * stride + (i % width);
    const sampleIndex = new Int32Array(memory.buffer, at.sampleIndex, ns);
    const noiseIndex = new Int32Array(memory.buffer, at.noiseIndex, noiseCount);
    // Every 7th pixel in raster order, as frameNoiseScale samples.
    for (let s = 0; s < noiseCount; s++) noiseIndex[s] = padded(s * scaleStride);
    const stepIndex = new Int32Array(memory.buffer, at.stepIndex, nss);
    const weightSS = f32(at.weightSS, nss);
    for (let t = 0; t < nss; t++) {
      const i = sample.pixels[t * scaleStride];
      stepIndex[t] = t * scaleStride;
      weightSS[t] = 1 / (noise[i] * noise[i]);
    }
    for (let s = 0; s < ns; s++) {
      const i = sample.pixels[s];
      sampleIndex[s] = padded(i);
      weightS[s] = 1 / (noise[i] * noise[i]);
    }
  }
  /** The basis as component planes: the whole frame's, the sample's and every 7th of the sample's. */
  function layBasis(): void {
    for (let j = 0; j < k; j++) {
      const plane = j * n;
      for (let y = 0, i = 0; y < height; y++) {
        for (let x = 0, p = plane + y * stride; x < width; x++, i++, p++) planes[p] = basis[i * k + j];
      }
    }
    for (let t = 0; t < nss; t++) {
      const i = sample.pixels[t * scaleStride];
      for (let j = 0; j < k; j++) planesSS[j * nss4 + t] = basis[i * k + j];
    }
    for (let s = 0; s < ns; s++) {
      const i = sample.pixels[s];
      for (let j = 0; j < k; j++) planesS[j * ns4 + s] = basis[i * k + j];
    }
  }
  layBasis();
  /** Whether the mean in the kernels' layout is older than the model's (see followMean). */
  let meanStale = true;
  function layMean(mean: Float32Array): void {
    meanRaw.set(mean);
    run.pad(at.meanRaw, width, height, stride, at.mean);
    meanStale = false;
  }
  const residualKernel = run[`residual_g${groups}`];
  const projectKernel = run[`project_g${groups}`];
  const robustKernel = run[`robust_g${groups}`];

  const normal = new Float64Array(k * k);
  const y = new Float64Array(k);
  const rhs = new Float64Array(k);

  /**
   * The kth smallest (0-based) of the n non-negative values at byte address `values`: the
   * kernel's radix pass narrows them to one histogram bin, quickselect finishes within it.
   */
  function select(values: number, n: number, kth: number): number {
    run.select(values, n, kth, at.hist, at.selected, at.selectResult);
    const inBin = selected.subarray(0, selectResult[0]);
    return quickselect(inBin, selectResult[1], { scratch: inBin });
  }

  function setCoordinates(): void {
    yKernel.fill(0);
    for (let j = 0; j < k; j++) yKernel[j] = y[j];
  }

  return {
    memoryBytes: memory.buffer.byteLength,
    residual(frame, residualOptions = {}) {
      const { robustSteps = 3, robustCutoff = 3 } = residualOptions;
      if (frame.width !== width || frame.height !== height) throw new RangeError(`frame is ${frame.width}×${frame.height}, the model is ${width}×${height}`);
      const data = frame.data;
      const modelMean = model.mean;
      zRaw.set(data);
      run.pad(at.zRaw, width, height, stride, at.z);
      if (followMean || meanStale) layMean(modelMean);
      run.gather(at.z, at.sampleIndex, ns, at.zS);
      run.gather(at.mean, at.sampleIndex, ns, at.meanS);
      run.gather(at.zS, at.stepIndex, nss, at.zSS);
      run.gather(at.meanS, at.stepIndex, nss, at.meanSS);
      // The least-squares coordinates on the sample, y = (B_Sᵀ B_S)⁻¹ B_Sᵀ (z − μ)_S…
      projectKernel(ns4, at.zS, at.meanS, at.basisS, 4 * ns4, at.projected);
      for (let j = 0; j < k; j++) rhs[j] = projected[j];
      if (!solveSymmetric(sample.gram, rhs, k, y)) y.fill(0);
      // …then the robust steps, as residualEnergy's on a pixel sample: the normal equations of
      // the kept pixels are those of the sample minus the left-out pixels' sums.
      let share = 0;
      if (robustSteps > 0) {
        const full = symmetricTimes(sample.gram, y, k);
        const gram = sample.gram;
        // The left-out set and its sums, updated by each step with the pixels that changed.
        left.fill(0);
        outer.fill(0);
        outerRhs.fill(0);
        let lastCount = -1;
        for (let step = 0; step < robustSteps; step++) {
          // The noise scale of the step: the median (r/σ)² of every 7th sampled pixel, the
          // element ⌊n/2⌋ of their sorted values, as residualEnergy's.
          setCoordinates();
          sums[0] = sums[1] = 0;
          residualKernel(nss4, at.zSS, at.meanSS, at.basisSS, 4 * nss4, at.y, at.weightSS, at.normSS, at.sums);
          const scale = Math.max(1, select(at.normSS, nss, nss >> 1) / chiSquare1Median);
          const limit = robustCutoff * robustCutoff * scale;
          const count = robustKernel(ns4, at.zS, at.meanS, at.basisS, 4 * ns4, at.y, at.weightS, limit, at.left, at.acc, at.outer, at.outerRhs);
          for (let p = 0; p < k; p++) {
            for (let q = 0; q <= p; q++) normal[p * k + q] = gram[p * k + q] - outer[p * kp + q];
            rhs[p] = full[p] - outerRhs[p];
          }
          share = count / ns;
          if (share < 0.001 || share > 0.8) break;
          if (!solveSymmetric(normal, rhs, k, y)) break;
          if (settled(count, lastCount)) break;
          lastCount = count;
        }
      }
      // The full pass: v = (r/σ)² at every pixel, with Σ r² and Σ v.
      setCoordinates();
      sums[0] = sums[1] = 0;
      residualKernel(n, at.z, at.mean, at.basis, 4 * n, at.y, at.weight, at.v, at.sums);
      let difs = 0;
      for (let j = 0; j < k; j++) if (eigenvalues[j] > 0) difs += (y[j] * y[j]) / eigenvalues[j];
      return { coefficients: y, dffs: sums[0], difs, normalisedEnergy: sums[1] / d, outlierShare: share };
    },

    noiseScale() {
      // The median of every 7th pixel's (r/σ)², as frameNoiseScale: for an even count the mean
      // of the two middle values.
      run.gather(at.v, at.noiseIndex, noiseCount, at.noiseSample);
      if (noiseCount === 0) return 1;
      const half = noiseCount >> 1;
      if (noiseCount % 2 === 1) return select(at.noiseSample, noiseCount, half) / chiSquare1Median;
      // The lower middle; the upper one is the smallest value after it in its bin (quickselect
      // left the bin partitioned there), or, when it was the bin's last, the next bin's first.
      const lower = select(at.noiseSample, noiseCount, half - 1);
      const inBin = selectResult[0];
      let upper = Infinity;
      for (let s = selectResult[1] + 1; s < inBin; s++) if (selected[s] < upper) upper = selected[s];
      if (upper === Infinity) upper = select(at.noiseSample, noiseCount, half);
      const median = (lower + upper) / 2;
      return median / chiSquare1Median;
    },

    threshold(noiseScale, out) {
      const mask = outputBitMask(width, height, out);
      run.threshold(at.v, at.h, stride, height, words, at.tn, at.ts, noiseScale, at.bits);
      mask.data.set(bitWords);
      return mask;
    },

    refreshBasis: layBasis,
    refreshMean() {
      meanStale = true;
    },
  };
}
