import { describe, expect, it } from 'vitest';
import { createMask, type Mask } from '../../src/domain/frame.ts';
import { adaptBackground, adaptBackgroundScratch } from '../../src/vision/adaptBackground.ts';
import { mulberry } from '../helpers/random.ts';

/** A mean-only model (k = 0) of a width × height frame with noise level σ everywhere. */
function meanModel(mean: number[], width: number, height: number, sigma = 2) {
  return { width, height, components: 0, mean: Float32Array.from(mean), basis: new Float32Array(0), noise: new Float32Array(width * height).fill(sigma) };
}

function maskOf(bits: number[], width: number, height: number): Mask {
  const m = createMask(width, height);
  m.data.set(bits);
  return m;
}

describe('adaptBackground', () => {
  it('moves the mean of background pixels by the forgetting factor, and converges geometrically', () => {
    // check: hand-computed from the mean update with forgetting factor f of Ross, Lim, Lin & Yang
    // (2008, §3.1), μ ← f·μ + (1 − f)·z, here with rate = 1 − f = 0.1 and k = 0 (r = z − μ).
    const model = meanModel([100, 100, 100, 100], 4, 1);
    const frame = { width: 4, height: 1, data: Float32Array.of(101, 103, 98, 100) };
    const everywhere = maskOf([1, 1, 1, 1], 4, 1);
    const step = adaptBackground(model, frame, everywhere, { rate: 0.1 });
    expect(Array.from(step.mean)).toEqual([100.1, 100.3, 99.8, 100].map(Math.fround));
    expect(step.used).toBe(4);
    expect(Array.from(model.mean)).toEqual([100, 100, 100, 100]); // input untouched without `out`
    // In place, n updates towards a fixed scene leave (1 − rate)^n of the gap.
    const scene = { width: 4, height: 1, data: Float32Array.of(103, 103, 103, 103) };
    for (let n = 0; n < 30; n++) adaptBackground(model, scene, everywhere, { rate: 0.1, out: model.mean });
    expect(model.mean[0]).toBeCloseTo(103 - 3 * 0.9 ** 30, 4);
  });

  it('leaves out pixels above the maybe-foreground level and moves them with the relative drift around them', () => {
    // check: hand-computed normalised convolution (Knutsson & Westin 1993) on a 3×1 window.
    // Pixel 2 is not background, pixel 3 is background but 20 grey levels off (10σ > 2σ).
    const model = meanModel([100, 100, 100, 100, 100], 5, 1);
    const frame = { width: 5, height: 1, data: Float32Array.of(102, 102, 150, 120, 102) };
    const background = maskOf([1, 1, 0, 1, 1], 5, 1);
    const step = adaptBackground(model, frame, background, { rate: 0.5, fieldRadius: 1, minSupport: 0.3 });
    // Used: 0, 1, 4 (r = 2, b = 100: r / b = 0.02). Pixel 2's window {1, 2, 3} holds one used pixel
    // of 3 (≥ 0.3): f = 0.02, μ ← 100 + 0.5 · 0.02 · b with b = z − r = 100. Pixel 3's window {2, 3, 4}: the same.
    expect(step.used).toBe(3);
    expect(step.filled).toBe(2);
    expect(Array.from(step.mean)).toEqual([101, 101, 101, 101, 101]);
    // With a larger minimum support the windows of pixels 2 and 3 do not count at radius 1, but the
    // radius-3 window (the whole row: 3 used of 5) does.
    const wider = adaptBackground(model, frame, background, { rate: 0.5, fieldRadius: 1, minSupport: 0.5 });
    expect(Array.from(wider.mean)).toEqual([101, 101, 101, 101, 101]);
    // Where no window has enough used pixels, the mean stays.
    const none = adaptBackground(model, frame, background, { rate: 0.5, fieldRadius: 1, minSupport: 0.9 });
    expect(Array.from(none.mean)).toEqual([101, 101, 100, 100, 101]);
  });

  it('fits the subspace coordinates on background pixels only and learns only what the subspace cannot explain', () => {
    // One component b = (½, ½, ½, ½) (unit length). A frame μ + 20·b plus a bright person on
    // pixel 3: least squares over pixels 0..2 gives y = Σ b_i (z − μ)_i / Σ b_i² = 15 / 0.75 = 20.
    const model = { width: 4, height: 1, components: 1, mean: new Float32Array(4), basis: Float32Array.of(0.5, 0.5, 0.5, 0.5), noise: new Float32Array(4).fill(2) };
    const frame = { width: 4, height: 1, data: Float32Array.of(10, 10, 10, 200) };
    const step = adaptBackground(model, frame, maskOf([1, 1, 1, 0], 4, 1), { rate: 1, fieldRadius: 1 });
    // check: hand-computed masked least squares, y = (B_Kᵀ B_K)⁻¹ B_Kᵀ (z − μ)_K with K = {0, 1, 2}
    expect(step.coefficients[0]).toBeCloseTo(20, 10);
    // r = 0 on the background: the brightness is the subspace's, the mean stays; the person is not learned.
    for (const m of step.mean) expect(m).toBeCloseTo(0, 10);
  });

  it('absorbs the marked pixels at once', () => {
    const model = meanModel([50, 50, 50, 50], 4, 1);
    const frame = { width: 4, height: 1, data: Float32Array.of(50, 200, 200, 50) };
    const step = adaptBackground(model, frame, maskOf([1, 0, 0, 1], 4, 1), { absorb: Uint8Array.of(0, 1, 0, 0), fieldRadius: 1, minSupport: 1 });
    expect(step.absorbed).toBe(1);
    expect(Array.from(step.mean)).toEqual([50, 200, 50, 50]);
  });

  it('leaves the mean alone when too little of the frame is background to fit the coordinates', () => {
    // Two components need at least 4 background pixels (2k); 3 are given.
    const basis = new Float32Array(2 * 64);
    for (let i = 0; i < 64; i++) basis[2 * i] = 1 / 8; // a constant image, unit length
    basis[2 * 5 + 1] = 1; // one pixel on its own
    const model = { width: 8, height: 8, components: 2, mean: new Float32Array(64).fill(80), basis, noise: new Float32Array(64).fill(2) };
    const frame = { width: 8, height: 8, data: new Float32Array(64).fill(120) };
    const bits = new Array(64).fill(0);
    bits[0] = bits[1] = bits[2] = 1;
    const step = adaptBackground(model, frame, maskOf(bits, 8, 8));
    expect(step.applied).toBe(false);
    expect(Array.from(step.mean)).toEqual(new Array(64).fill(80));
  });

  it('computes the field as a brute-force normalised box average would', () => {
    // check: a direct implementation of normalised convolution (Σ c·v / Σ c over each window,
    // Knutsson & Westin 1993) against the running-sum one, on a random 23×17 grid.
    const width = 23, height = 17, d = width * height, radius = 2, minSupport = 0.3;
    const rng = mulberry(5);
    const mean = Float32Array.from({ length: d }, () => 60 + 100 * rng());
    const data = Float32Array.from(mean, (m) => m * (1 + 0.02 * rng())); // a small relative drift, under 2σ
    const model = { width, height, components: 0, mean, basis: new Float32Array(0), noise: new Float32Array(d).fill(10) };
    const background = createMask(width, height);
    for (let i = 0; i < d; i++) background.data[i] = rng() < 0.6 ? 1 : 0;
    const step = adaptBackground(model, { width, height, data }, background, { rate: 1, fieldRadius: radius, minSupport, scratch: adaptBackgroundScratch(width, height) });
    let checked = 0;
    for (let y = 0; y < height; y++) {
      for (let x = 0; x < width; x++) {
        const i = y * width + x;
        if (background.data[i]) {
          expect(step.mean[i]).toBeCloseTo(data[i], 3);
          continue;
        }
        let sum = 0, used = 0, inside = 0;
        for (let v = Math.max(0, y - radius); v <= Math.min(height - 1, y + radius); v++) {
          for (let u = Math.max(0, x - radius); u <= Math.min(width - 1, x + radius); u++) {
            const j = v * width + u;
            inside++;
            if (background.data[j]) {
              used++;
              sum += (data[j] - mean[j]) / mean[j];
            }
          }
        }
        if (used < minSupport * inside) continue; // filled from a larger window
        expect(step.mean[i]).toBeCloseTo(mean[i] + (sum / used) * mean[i], 3);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(50);
  });

  it('names the option in its errors', () => {
    const model = meanModel([1, 1], 2, 1);
    const frame = { width: 2, height: 1, data: Float32Array.of(1, 1) };
    const all = maskOf([1, 1], 2, 1);
    expect(() => adaptBackground(model, frame, all, { rate: 1.5 })).toThrow(/rate must be in 0..1/);
    expect(() => adaptBackground(model, frame, all, { fieldRadius: 0 })).toThrow(/fieldRadius/);
    expect(() => adaptBackground(model, frame, all, { maybeLevel: 0 })).toThrow(/maybeLevel/);
    expect(() => adaptBackground(model, { width: 1, height: 2, data: Float32Array.of(1, 1) }, all)).toThrow(/frame is 1×2/);
  });
});
