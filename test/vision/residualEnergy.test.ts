import { describe, expect, it } from 'vitest';
import { Matrix, solve } from 'ml-matrix';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { residualEnergy } from '../../src/vision/residualEnergy.ts';
import { sampleCoefficientPixels } from '../../src/vision/residualEnergy/coefficientSample.ts';
import { settled } from '../../src/vision/residualEnergy/robustProject.ts';
import { mulberry } from '../helpers/random.ts';

describe('residualEnergy', () => {
  const width = 12;
  const height = 8;
  const d = width * height;
  const rand = mulberry(5);
  const frames = Array.from({ length: 25 }, () => Float32Array.from({ length: d }, () => 50 + rand() * 100));
  const model = fitSubspace(frames, { width, height }, { components: 4 });

  it('matches r = (z − μ) − B·Bᵀ(z − μ) computed with dense matrices', () => {
    const z = Float32Array.from({ length: d }, () => rand() * 255);
    const result = residualEnergy(model, { width, height, data: z }, { robustSteps: 0 });
    // check: ml-matrix dense products (an independent route to the same projection)
    const B = new Matrix(d, model.components);
    for (let i = 0; i < d; i++) for (let j = 0; j < model.components; j++) B.set(i, j, model.basis[i * model.components + j]);
    const c = Matrix.columnVector(Array.from(z, (v, i) => v - model.mean[i]));
    const y = B.transpose().mmul(c);
    const r = Matrix.sub(c, B.mmul(y));
    for (let i = 0; i < d; i++) expect(result.energy[i]).toBeCloseTo(r.get(i, 0) ** 2, 2);
    expect(result.dffs).toBeCloseTo(r.norm() ** 2, 0);
    for (let j = 0; j < model.components; j++) expect(result.coefficients[j]).toBeCloseTo(y.get(j, 0), 3);
    const difs = Array.from({ length: model.components }, (_, j) => y.get(j, 0) ** 2 / model.eigenvalues[j]).reduce((a, b) => a + b);
    expect(result.difs).toBeCloseTo(difs, 6);
  });

  it('gives no residual for a frame inside the subspace', () => {
    const z = new Float32Array(d);
    for (let i = 0; i < d; i++) z[i] = model.mean[i] + 30 * model.basis[i * model.components] - 12 * model.basis[i * model.components + 2];
    const result = residualEnergy(model, { width, height, data: z });
    expect(result.dffs).toBeLessThan(1e-6);
    expect(result.coefficients[0]).toBeCloseTo(30, 3);
    expect(result.coefficients[2]).toBeCloseTo(-12, 3);
  });

  it('is the squared difference from the mean when the model keeps no components', () => {
    const mean0 = fitSubspace(frames, { width, height }, { components: 0 });
    const z = Float32Array.from({ length: d }, () => rand() * 255);
    const result = residualEnergy(mean0, { width, height, data: z });
    for (let i = 0; i < d; i++) expect(result.energy[i]).toBeCloseTo((z[i] - mean0.mean[i]) ** 2, 2);
    expect(result.difs).toBe(0);
  });

  it('projects robustly: a large object does not pull the background reconstruction', () => {
    // A scene whose only variation is a global brightness gain, and a frame with a bright object
    // over a fifth of it: plain least squares reads the object as "brighter scene" everywhere.
    const w = 40;
    const h = 30;
    const n = w * h;
    const base = Float32Array.from({ length: n }, (_, i) => 60 + (i % w) + 20 * Math.sin(i / 17));
    const learn = Array.from({ length: 30 }, (_, t) => Float32Array.from(base, (v, i) => v * (0.8 + 0.4 * (t / 29)) + ((i * 7919 + t * 104729) % 7) - 3));
    const gainModel = fitSubspace(learn, { width: w, height: h }, { components: 1 });
    const z = Float32Array.from(base);
    for (let y = 5; y < 20; y++) for (let x = 5; x < 21; x++) z[y * w + x] = 250;
    const background = (e: Float32Array) => {
      let s = 0;
      let c = 0;
      for (let i = 0; i < n; i++) {
        const x = i % w;
        const y = Math.floor(i / w);
        if (x >= 3 && x < 23 && y >= 3 && y < 22) continue;
        s += e[i];
        c++;
      }
      return s / c;
    };
    const plain = residualEnergy(gainModel, { width: w, height: h, data: z }, { robustSteps: 0 });
    const robust = residualEnergy(gainModel, { width: w, height: h, data: z });
    expect(background(plain.energy)).toBeGreaterThan(100);
    expect(background(robust.energy)).toBeLessThan(20);
    expect(robust.outlierShare).toBeGreaterThan(0.15);
    expect(robust.outlierShare).toBeLessThan(0.35);
  });

  it('reuses buffers and rejects frames of another size', () => {
    const out = new Float32Array(d);
    const z = Float32Array.from({ length: d }, () => rand() * 255);
    expect(residualEnergy(model, { width, height, data: z }, { out }).energy).toBe(out);
    expect(() => residualEnergy(model, { width: height, height: width, data: z })).toThrow(/8×12/);
    expect(() => residualEnergy(model, { width, height, data: z }, { out: new Float32Array(3) })).toThrow(/length 3/);
  });

  it('solves the coordinates on a pixel sample by least squares, and still gives every pixel its residual', () => {
    const z = Float32Array.from({ length: d }, () => rand() * 255);
    const sample = sampleCoefficientPixels(model, 3);
    expect(Array.from(sample.pixels.slice(0, 4))).toEqual([0, 3, 6, 9]);
    const result = residualEnergy(model, { width, height, data: z }, { robustSteps: 0, coefficientSample: sample });
    // check: ml-matrix solve of the normal equations on the sampled rows (an independent route)
    const k = model.components;
    const rows = Array.from(sample.pixels);
    const Bs = new Matrix(rows.map((i) => Array.from(model.basis.subarray(i * k, i * k + k))));
    const cs = Matrix.columnVector(rows.map((i) => z[i] - model.mean[i]));
    const y = solve(Bs.transpose().mmul(Bs), Bs.transpose().mmul(cs));
    for (let j = 0; j < k; j++) expect(result.coefficients[j]).toBeCloseTo(y.get(j, 0), 3);
    for (let i = 0; i < d; i++) {
      let r = z[i] - model.mean[i];
      for (let j = 0; j < k; j++) r -= model.basis[i * k + j] * y.get(j, 0);
      expect(result.energy[i]).toBeCloseTo(r * r, 1);
    }
  });

  it('gives the same robust coordinates from a pixel sample as from every pixel, up to noise', () => {
    // The gain scene of the robust test, at a size where a third of the pixels is still many.
    const w = 64;
    const h = 48;
    const n = w * h;
    const base = Float32Array.from({ length: n }, (_, i) => 60 + (i % w) + 20 * Math.sin(i / 17));
    const noise = mulberry(11);
    const learn = Array.from({ length: 30 }, (_, t) => Float32Array.from(base, (v) => v * (0.8 + 0.4 * (t / 29)) + 4 * (noise() - 0.5)));
    const gainModel = fitSubspace(learn, { width: w, height: h }, { components: 2 });
    const z = Float32Array.from(base, (v) => v * 1.1 + 4 * (noise() - 0.5));
    for (let y = 8; y < 30; y++) for (let x = 10; x < 30; x++) z[y * w + x] = 250;
    const all = residualEnergy(gainModel, { width: w, height: h, data: z });
    const sampled = residualEnergy(gainModel, { width: w, height: h, data: z }, { coefficientSample: sampleCoefficientPixels(gainModel, 3) });
    // The gain coordinate is about √Σμ² · 0.1 ≈ hundreds of grey levels; noise moves it by well under one.
    expect(Math.abs(all.coefficients[0])).toBeGreaterThan(100);
    expect(Math.abs(sampled.coefficients[0] - all.coefficients[0])).toBeLessThan(1);
    expect(sampled.outlierShare).toBeGreaterThan(0.1);
    expect(Math.abs(sampled.dffs - all.dffs) / all.dffs).toBeLessThan(0.01);
    expect(() => residualEnergy(model, { width, height, data: z.subarray(0, d) }, { coefficientSample: sampleCoefficientPixels(gainModel, 3) })).toThrow(/another model/);
  });
});

describe('settled', () => {
  it('calls a left-out set settled once its size is within 1 % of the step before, never on the first step', () => {
    // check: common practice — a relative change bound as a stopping rule of an iteration.
    expect(settled(1000, 1010)).toBe(true);
    expect(settled(1000, 990)).toBe(true);
    expect(settled(1000, 1011)).toBe(false);
    expect(settled(0, 0)).toBe(true);
    expect(settled(5, -1)).toBe(false);
  });
});
