import { describe, expect, it } from 'vitest';
import { thresholdResidual } from '../../src/vision/thresholdResidual.ts';
import { mulberry } from '../helpers/random.ts';

/** Direct reference: mean of e·w over the in-image part of the window above t², and the pixel's own e·w above (share·t)². */
function reference(e: Float32Array, w: Float32Array, width: number, height: number, radius: number, t: number, share: number): Uint8Array {
  const m = new Uint8Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let s = 0;
      let n = 0;
      for (let v = Math.max(0, y - radius); v <= Math.min(height - 1, y + radius); v++) {
        for (let u = Math.max(0, x - radius); u <= Math.min(width - 1, x + radius); u++) {
          s += e[v * width + u] * w[v * width + u];
          n++;
        }
      }
      const own = e[y * width + x] * w[y * width + x];
      m[y * width + x] = s / n > t * t && (share === 0 || own > share * share * t * t) ? 1 : 0;
    }
  }
  return m;
}

describe('thresholdResidual', () => {
  it('thresholds a single pixel without smoothing, strictly above t²', () => {
    const e = Float32Array.of(0, 9, 9.01, 100);
    const w = new Float32Array(4).fill(1);
    const mask = thresholdResidual(e, w, { width: 4, height: 1 }, { threshold: 3, radius: 0 });
    expect(Array.from(mask.data)).toEqual([0, 0, 1, 1]);
  });

  it('keeps the smoothing from growing a halo around a bright blob', () => {
    // A 3×3 block of strong residual in a 7×7 frame: smoothing alone flags its 1-pixel surround too.
    const e = new Float32Array(49);
    for (let y = 2; y <= 4; y++) for (let x = 2; x <= 4; x++) e[y * 7 + x] = 400;
    const w = new Float32Array(49).fill(1);
    const count = (m: { data: Uint8Array }) => m.data.reduce((a, b) => a + b, 0);
    expect(count(thresholdResidual(e, w, { width: 7, height: 7 }, { threshold: 3, pixelShare: 0 }))).toBe(25);
    expect(count(thresholdResidual(e, w, { width: 7, height: 7 }, { threshold: 3 }))).toBe(9);
  });

  it('raises every threshold by the frame noise scale', () => {
    const e = Float32Array.of(20, 40);
    const w = new Float32Array(2).fill(1);
    const mask = thresholdResidual(e, w, { width: 2, height: 1 }, { threshold: 3, radius: 0, noiseScale: 3 });
    expect(Array.from(mask.data)).toEqual([0, 1]);
  });

  it('divides by the noise variance', () => {
    const e = Float32Array.of(50, 50);
    const w = Float32Array.of(1 / 4, 1 / 9); // σ = 2 and σ = 3
    const mask = thresholdResidual(e, w, { width: 2, height: 1 }, { threshold: 3, radius: 0 });
    expect(Array.from(mask.data)).toEqual([1, 0]);
  });

  it('agrees with a direct windowed mean, borders included', () => {
    const rand = mulberry(9);
    for (const [width, height, radius] of [[17, 11, 1], [5, 23, 2], [1, 9, 1], [30, 20, 3], [4, 4, 5]]) {
      const d = width * height;
      const e = Float32Array.from({ length: d }, () => (rand() < 0.2 ? 200 * rand() : 4 * rand()));
      const w = Float32Array.from({ length: d }, () => 0.05 + rand() * 0.5);
      const t = 1 + rand() * 3;
      for (const share of [0, 0.5, 0.9]) {
        const mask = thresholdResidual(e, w, { width, height }, { threshold: t, radius, pixelShare: share });
        expect(Array.from(mask.data)).toEqual(Array.from(reference(e, w, width, height, radius, t, share)));
      }
    }
  });

  it('applies a per-pixel threshold map and checks sizes', () => {
    const e = Float32Array.of(20, 20, 20);
    const w = new Float32Array(3).fill(1);
    const mask = thresholdResidual(e, w, { width: 3, height: 1 }, { threshold: Float32Array.of(5, 5, 2), radius: 0 });
    expect(Array.from(mask.data)).toEqual([0, 0, 1]);
    expect(() => thresholdResidual(e, w, { width: 2, height: 1 })).toThrow(/pixels/);
    expect(() => thresholdResidual(e, w, { width: 3, height: 1 }, { threshold: new Float32Array(2) })).toThrow(/threshold map/);
  });
});
