import { readFileSync } from 'node:fs';
import { Matrix, solve } from 'ml-matrix';
import { afterEach, describe, expect, it } from 'vitest';
import { buildKernelModule } from '../../scripts/buildKernels.ts';
import type { GreyFrame } from '../../src/domain/frame.ts';
import { packMask, type BitMask } from '../../src/vision/bitMask.ts';
import { countingKernels, countingModule, SELECT_BINS } from '../../src/vision/countingKernels.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { frameNoiseScale } from '../../src/vision/frameNoiseScale.ts';
import { quickselect } from '../../src/vision/quickselect.ts';
import { setKernelsEnabled } from '../../src/vision/learningKernels.ts';
import { residualEnergy } from '../../src/vision/residualEnergy.ts';
import { refreshCoefficientSample, sampleCoefficientPixels } from '../../src/vision/residualEnergy/coefficientSample.ts';
import type { Subspace } from '../../src/vision/subspace.ts';
import { thresholdResidual } from '../../src/vision/thresholdResidual.ts';
import { mulberry } from '../helpers/random.ts';

// The kernels against the JS stages they replace (residualEnergy with a pixel sample,
// frameNoiseScale, thresholdResidual at radius 1), and the plain projection against dense
// least squares in ml-matrix.

afterEach(() => setKernelsEnabled(true));

/** A model learned from random frames with a few smooth "lighting" directions, and frames with bright boxes. */
function scene(width: number, height: number, components: number, seed: number) {
  const rand = mulberry(seed);
  const d = width * height;
  const base = Float32Array.from({ length: d }, (_, i) => 80 + 60 * Math.sin(i / 13) + 30 * rand());
  const light = (t: number) => Float32Array.from(base, (v, i) => v * (0.8 + 0.4 * t) + 10 * Math.sin(t * 6 + i / (width + 1)) + 4 * (rand() - 0.5));
  const model = fitSubspace(Array.from({ length: 40 }, (_, t) => light(t / 39)), { width, height }, { components });
  const frame = (t: number, boxes: number): GreyFrame => {
    const data = light(t);
    for (let b = 0; b < boxes; b++) {
      const x0 = Math.floor(rand() * width * 0.8);
      const y0 = Math.floor(rand() * height * 0.8);
      for (let y = y0; y < Math.min(height, y0 + 2 + height / 5); y++) for (let x = x0; x < Math.min(width, x0 + 2 + width / 6); x++) data[y * width + x] = 20 + 200 * rand();
    }
    return { width, height, data };
  };
  return { model, frame, rand };
}

function setup(model: Subspace, threshold: (i: number) => number = () => 3) {
  const d = model.width * model.height;
  const thresholds = Float32Array.from({ length: d }, (_, i) => threshold(i));
  const coefficientSample = sampleCoefficientPixels(model, 3);
  const kernels = countingKernels(model, { coefficientSample, thresholds });
  const weight = Float32Array.from(model.noise, (s) => 1 / (s * s));
  return { thresholds, coefficientSample, kernels: kernels!, weight };
}

/** Pixels set in one packed mask and not the other, ignoring the padding bits. */
function differingPixels(a: BitMask, b: BitMask): number {
  const used = a.width & 31;
  const keep = used === 0 ? -1 : (1 << used) - 1;
  let n = 0;
  for (let w = 0; w < a.data.length; w++) {
    let x = (a.data[w] ^ b.data[w]) & (w % a.words === a.words - 1 ? keep : -1);
    for (; x !== 0; x &= x - 1) n++;
  }
  return n;
}

describe('countingKernels', () => {
  it('is the committed module, rebuilt from src/vision/kernels/wat/counting/*.wat (scripts/buildKernels.ts)', async () => {
    const committed = readFileSync(new URL('../../src/vision/kernels/counting.wasm', import.meta.url));
    expect(Buffer.from(await buildKernelModule('counting')).equals(committed)).toBe(true);
  });

  it('gives the JS stages’ coordinates, energies, noise scale and foreground, for 1 to 6 groups of components and any width', () => {
    // Groups of four components: k 2, 3 → 1; 5, 8 → 2; 12 → 3; 16 → 4; 18 → 5; 21, 24 → 6.
    for (const [width, height, k] of [[40, 30, 3], [33, 17, 8], [64, 20, 12], [1, 9, 2], [70, 45, 5], [48, 36, 16], [56, 40, 18], [41, 30, 21], [64, 48, 24]] as const) {
      const { model, frame } = scene(width, height, k, width * 7 + k);
      const { kernels, thresholds, coefficientSample, weight } = setup(model, (i) => 2.5 + (i % 5) * 0.25);
      for (const [t, boxes] of [[0.3, 0], [0.7, 2], [0.1, 4]] as const) {
        const f = frame(t, boxes);
        const js = residualEnergy(model, f, { inverseNoiseVariance: weight, coefficientSample });
        const ours = kernels.residual(f);
        const what = `${width}×${height} k${k} boxes ${boxes}`;
        const norm = Math.sqrt(js.coefficients.reduce((s, y) => s + y * y, 0)) + 1;
        for (let j = 0; j < k; j++) expect(Math.abs(ours.coefficients[j] - js.coefficients[j]), what).toBeLessThan(1e-4 * norm);
        expect(ours.dffs / js.dffs, what).toBeCloseTo(1, 4);
        expect(ours.normalisedEnergy / js.normalisedEnergy, what).toBeCloseTo(1, 4);
        expect(ours.difs / js.difs, what).toBeCloseTo(1, 4);
        expect(ours.outlierShare, what).toBeCloseTo(js.outlierShare, 3);
        const jsScale = frameNoiseScale(js.energy, weight);
        const ourScale = kernels.noiseScale();
        expect(ourScale / jsScale, what).toBeCloseTo(1, 4);
        const scale = Math.max(1, jsScale);
        const want = packMask(thresholdResidual(js.energy, weight, model, { threshold: thresholds, noiseScale: scale, radius: 1 }));
        const got = kernels.threshold(scale);
        // f32 lanes against the JS f64 sums: a pixel within rounding of its threshold may flip.
        expect(differingPixels(got, want), what).toBeLessThanOrEqual(Math.ceil(width * height * 1e-3));
      }
    }
  });

  it('solves the plain sampled projection as dense least squares on the sample', () => {
    const { model, frame } = scene(48, 36, 6, 3);
    const { kernels, coefficientSample } = setup(model);
    const f = frame(0.5, 3);
    const ours = kernels.residual(f, { robustSteps: 0 });
    // check: ml-matrix solve, y = argmin ‖B_S y − (z − μ)_S‖ over the sampled pixels
    const k = model.components;
    const pixels = Array.from(coefficientSample.pixels);
    const B = new Matrix(pixels.map((i) => Array.from({ length: k }, (_, j) => model.basis[i * k + j])));
    const c = Matrix.columnVector(pixels.map((i) => f.data[i] - model.mean[i]));
    const y = solve(B, c, true);
    for (let j = 0; j < k; j++) expect(ours.coefficients[j]).toBeCloseTo(y.get(j, 0), 2);
    // And the residual over every pixel: Σ r² with r = (z − μ) − B y.
    let dffs = 0;
    for (let i = 0; i < model.width * model.height; i++) {
      let r = f.data[i] - model.mean[i];
      for (let j = 0; j < k; j++) r -= model.basis[i * k + j] * y.get(j, 0);
      dffs += r * r;
    }
    expect(ours.dffs / dffs).toBeCloseTo(1, 4);
  });

  it('marks nothing in a frame the model explains, and a box that is not in the empty scene', () => {
    const { model, frame } = scene(60, 40, 4, 11);
    const { kernels } = setup(model);
    kernels.residual(frame(0.4, 0));
    const empty = kernels.threshold(Math.max(1, kernels.noiseScale()));
    expect(empty.data.every((w) => w === 0)).toBe(true);
    const f = frame(0.4, 0);
    for (let y = 10; y < 25; y++) for (let x = 20; x < 35; x++) f.data[y * 60 + x] = 255 - f.data[y * 60 + x];
    kernels.residual(f);
    const mask = kernels.threshold(Math.max(1, kernels.noiseScale()));
    const inside = (x: number, y: number) => (mask.data[y * mask.words + (x >> 5)] >>> (x & 31)) & 1;
    expect(inside(27, 17)).toBe(1);
    expect(inside(5, 5)).toBe(0);
  });

  it('averages over the in-image pixels of the window at the border, as thresholdResidual', () => {
    // A stripe along the left column and the top row, (r/σ)² ≈ 22 against a threshold of 3: the
    // border pixel's window mean is 22 · 3/6 > 9 over its 6 in-image pixels, but would be 22 · 3/9 < 9 over 9.
    const { model, frame } = scene(40, 30, 3, 9);
    const { kernels, thresholds, coefficientSample, weight } = setup(model);
    const f = frame(0.5, 0);
    for (let i = 0; i < 40 * 30; i++) if (i % 40 === 0 || i < 40) f.data[i] = model.mean[i] + Math.sqrt(22) * model.noise[i];
    const js = residualEnergy(model, f, { inverseNoiseVariance: weight, coefficientSample });
    kernels.residual(f);
    const want = packMask(thresholdResidual(js.energy, weight, model, { threshold: thresholds, noiseScale: Math.max(1, frameNoiseScale(js.energy, weight)) }));
    const got = kernels.threshold(Math.max(1, kernels.noiseScale()));
    expect(want.data[10 * want.words] & 1).toBe(1); // (0, 10) is set
    expect(differingPixels(got, want)).toBeLessThanOrEqual(1);
  });

  it('follows a mean changed in place, as the drift adaptation changes it', () => {
    const { model, frame } = scene(40, 30, 3, 5);
    const { kernels, coefficientSample, weight } = setup(model);
    const f = frame(0.5, 1);
    for (let i = 0; i < model.mean.length; i++) model.mean[i] += 5 * Math.sin(i);
    const js = residualEnergy(model, f, { inverseNoiseVariance: weight, coefficientSample });
    expect(kernels.residual(f).dffs / js.dffs).toBeCloseTo(1, 4);
  });

  it('with followMean false, takes a changed mean on refreshMean only; takes a changed basis on refreshBasis', () => {
    const { model, frame } = scene(40, 30, 3, 5);
    const d = model.width * model.height;
    const thresholds = new Float32Array(d).fill(3);
    const coefficientSample = sampleCoefficientPixels(model, 3);
    const kernels = countingKernels(model, { coefficientSample, thresholds, followMean: false })!;
    const weight = Float32Array.from(model.noise, (s) => 1 / (s * s));
    const f = frame(0.5, 1);
    const before = residualEnergy(model, f, { inverseNoiseVariance: weight, coefficientSample }).dffs;
    expect(kernels.residual(f).dffs / before).toBeCloseTo(1, 4);
    for (let i = 0; i < d; i++) model.mean[i] += 5 * Math.sin(i);
    // check: residualEnergy (the JS stage) on the model as it is now
    const after = residualEnergy(model, f, { inverseNoiseVariance: weight, coefficientSample }).dffs;
    expect(Math.abs(after / before - 1)).toBeGreaterThan(0.01);
    expect(kernels.residual(f).dffs / before).toBeCloseTo(1, 4);
    kernels.refreshMean();
    expect(kernels.residual(f).dffs / after).toBeCloseTo(1, 4);
    // A basis rotated in place (components swapped), its sample refreshed: the same residual.
    const k = model.components;
    for (let i = 0; i < d; i++) {
      const first = model.basis[i * k];
      model.basis[i * k] = model.basis[i * k + 1];
      model.basis[i * k + 1] = first;
    }
    refreshCoefficientSample(coefficientSample, k);
    kernels.refreshBasis();
    const swapped = residualEnergy(model, f, { inverseNoiseVariance: weight, coefficientSample });
    const ours = kernels.residual(f);
    expect(ours.dffs / swapped.dffs).toBeCloseTo(1, 4);
    expect(ours.coefficients[0]).toBeCloseTo(swapped.coefficients[0], 3);
  });

  it('is not offered without components or with the kernels turned off, and refuses more than 24 components', () => {
    const { model } = scene(20, 10, 0, 1);
    expect(countingKernels(model, { coefficientSample: sampleCoefficientPixels(model, 3), thresholds: new Float32Array(200) })).toBeUndefined();
    const many = scene(20, 10, 13, 1).model;
    expect(countingKernels(many, { coefficientSample: sampleCoefficientPixels(many, 3), thresholds: new Float32Array(200) })).toBeDefined();
    const most = scene(20, 10, 24, 1).model;
    const tooMany = { ...most, components: 25, basis: new Float32Array(200 * 25), eigenvalues: new Float64Array(25).fill(1) };
    expect(() => countingKernels(tooMany, { coefficientSample: sampleCoefficientPixels(most, 3), thresholds: new Float32Array(200) })).toThrow(/components: the model has 25, the counter takes at most 24/);
    expect(() => scene(20, 10, 25, 1)).toThrow(/components 25 is more than the 24/);
    const some = scene(20, 10, 4, 1).model;
    setKernelsEnabled(false);
    expect(countingKernels(some, { coefficientSample: sampleCoefficientPixels(some, 3), thresholds: new Float32Array(200) })).toBeUndefined();
    setKernelsEnabled(true);
    expect(() => countingKernels(some, { coefficientSample: sampleCoefficientPixels(some, 3), thresholds: new Float32Array(10) })).toThrow(/thresholds has length 10, expected 200/);
    expect(() => countingKernels(some, { coefficientSample: sampleCoefficientPixels(many, 3), thresholds: new Float32Array(200) })).toThrow(/another model/);
    expect(() => setup(some).kernels.residual({ width: 10, height: 20, data: new Float32Array(200) })).toThrow(/frame is 10×20, the model is 20×10/);
  });
});

// The data-moving kernels one by one, on the module itself, against the plain TS they stand for.
describe('the counting module’s pad, gather and select', () => {
  interface Moves {
    pad(src: number, width: number, rows: number, stride: number, dst: number): void;
    gather(src: number, index: number, n: number, dst: number): void;
    select(values: number, n: number, kth: number, hist: number, out: number, result: number): void;
  }
  function instance() {
    const memory = new WebAssembly.Memory({ initial: 4 });
    const run = new WebAssembly.Instance(countingModule()!, { env: { memory } }).exports as unknown as Moves;
    return { run, f32: new Float32Array(memory.buffer), i32: new Int32Array(memory.buffer) };
  }

  it('pad copies rows to a longer stride and leaves the padding alone, exactly', () => {
    const rand = mulberry(31);
    const { run, f32 } = instance();
    for (const [width, rows, stride] of [[1, 1, 4], [5, 3, 8], [33, 7, 36], [64, 2, 64]] as const) {
      const src = Float32Array.from({ length: width * rows }, () => rand() * 255);
      f32.set(src, 16);
      const dst = 4096;
      f32.fill(-1, dst, dst + rows * stride);
      run.pad(16 * 4, width, rows, stride, dst * 4);
      // check: the row-by-row copy written out in TS
      for (let y = 0; y < rows; y++) {
        for (let x = 0; x < stride; x++) expect(f32[dst + y * stride + x], `${width}×${rows} (${x}, ${y})`).toBe(x < width ? src[y * width + x] : -1);
      }
    }
  });

  it('gather takes the values at the indices, exactly', () => {
    const rand = mulberry(32);
    const { run, f32, i32 } = instance();
    const src = Float32Array.from({ length: 1000 }, () => rand() * 100);
    f32.set(src, 16);
    for (const n of [0, 1, 7, 300]) {
      const index = Int32Array.from({ length: n }, () => Math.floor(rand() * 1000));
      i32.set(index, 2048);
      f32.fill(-1, 4096, 4096 + n + 1);
      run.gather(16 * 4, 2048 * 4, n, 4096 * 4);
      // check: src[index[s]] in TS; the value past n is not written
      for (let s = 0; s < n; s++) expect(f32[4096 + s]).toBe(src[index[s]]);
      expect(f32[4096 + n]).toBe(-1);
    }
  });

  it('select narrows to the bin whose rank-th value is quickselect’s, exactly, with ties and zeros', () => {
    const rand = mulberry(33);
    const { run, f32, i32 } = instance();
    const values = 16;
    const hist = 8192;
    const out = hist + SELECT_BINS;
    const result = out + 8192;
    for (const [n, spread] of [[1, 1], [2, 0], [9, 3], [777, 50], [5000, 1e6]] as const) {
      // Squares of normals (χ²-like, as the energies are), some exact ties and zeros.
      const v = Float32Array.from({ length: n }, (_, i) => (i % 11 === 0 ? 0 : i % 13 === 0 ? 1 : (spread * (rand() + rand() + rand() - 1.5)) ** 2));
      f32.set(v, values);
      for (const kth of new Set([0, n >> 1, n - 1, Math.floor(rand() * n)])) {
        run.select(values * 4, n, kth, hist * 4, out * 4, result * 4);
        const inBin = f32.slice(out, out + i32[result]);
        // check: quickselect over all n values (the TS stage, as frameNoiseScale selects)
        expect(quickselect(inBin, i32[result + 1]), `n ${n}, kth ${kth}`).toBe(quickselect(v, kth));
      }
    }
  });
});
