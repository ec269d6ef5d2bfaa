import { describe, expect, it } from 'vitest';
import { thresholdResidual } from '../../src/vision/thresholdResidual.ts';
import { mulberry } from '../helpers/random.ts';

/** Direct reference: mean of e·w over the in-image part of the window, compared with t². */
function reference(e: Float32Array, w: Float32Array, width: number, height: number, radius: number, t: number): Uint8Array {
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
      m[y * width + x] = s / n > t * t ? 1 : 0;
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
      const mask = thresholdResidual(e, w, { width, height }, { threshold: t, radius });
      expect(Array.from(mask.data)).toEqual(Array.from(reference(e, w, width, height, radius, t)));
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
