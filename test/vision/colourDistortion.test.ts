import { describe, expect, it } from 'vitest';
import { colourDistortion } from '../../src/vision/colourDistortion.ts';

const pixel = (rgb: number[]) => ({ width: 1, height: 1, data: Uint8Array.from(rgb) });
const reference = (mean: number[], spread: number[]) => ({ width: 1, height: 1, mean: Float32Array.from(mean), spread: Float32Array.from(spread) });

describe('colourDistortion', () => {
  it('computes α and CD as in Horprasert, Harwood & Davis 1999', () => {
    // check: hand-computed from the formulas of Horprasert, Harwood & Davis, "A statistical
    // approach for real-time robust background subtraction and shadow detection", ICCV'99
    // Frame-Rate Workshop (formulas recalled from memory):
    //   α = Σ_c I_c μ_c / σ_c² / Σ_c (μ_c / σ_c)²,  CD = √Σ_c ((I_c − α μ_c) / σ_c)².
    // I = (90, 120, 30), μ = (100, 100, 50), σ = (5, 10, 5):
    //   α = (90·100/25 + 120·100/100 + 30·50/25) / (400 + 100 + 100) = (360 + 120 + 60) / 600 = 0.9
    //   CD = √((18 − 18)² + (12 − 9)² + (6 − 9)²) = √18 = 4.2426
    const { alpha, cd } = colourDistortion(pixel([90, 120, 30]), reference([100, 100, 50], [5, 10, 5]));
    expect(alpha[0]).toBeCloseTo(0.9, 6);
    expect(cd[0]).toBeCloseTo(Math.sqrt(18), 5);
  });

  it('gives α the scale of E nearest to I, and CD = 0 for a pure change of brightness', () => {
    const E = [120, 90, 60];
    const S = [6, 4, 3];
    // A shadow: 0.55 × E exactly.
    const shadow = colourDistortion(pixel([66, 49.5, 33].map(Math.round)), reference(E, S));
    expect(shadow.alpha[0]).toBeCloseTo(0.55, 2);
    expect(shadow.cd[0]).toBeLessThan(0.15); // rounding of 49.5 only
    // α minimises the σ-weighted distance: nudging it either way gives a larger distance.
    const I = [100, 40, 90];
    const { alpha, cd } = colourDistortion(pixel(I), reference(E, S));
    const distance = (a: number) => Math.hypot(...I.map((v, c) => (v - a * E[c]) / S[c]));
    expect(distance(alpha[0])).toBeCloseTo(cd[0], 4);
    expect(distance(alpha[0] + 0.01)).toBeGreaterThan(cd[0]);
    expect(distance(alpha[0] - 0.01)).toBeGreaterThan(cd[0]);
  });

  it('handles a black expected colour, sizes and out buffers', () => {
    const { alpha, cd } = colourDistortion(pixel([3, 4, 0]), reference([0, 0, 0], [1, 1, 1]));
    expect(alpha[0]).toBeNaN();
    expect(cd[0]).toBeCloseTo(5, 6);
    const out = { alpha: new Float32Array(1), cd: new Float32Array(1) };
    expect(colourDistortion(pixel([1, 2, 3]), reference([1, 2, 3], [1, 1, 1]), { out }).alpha).toBe(out.alpha);
    expect(out.alpha[0]).toBeCloseTo(1, 6);
    expect(() => colourDistortion({ width: 2, height: 1, data: new Uint8Array(6) }, reference([1, 1, 1], [1, 1, 1]))).toThrow(/2×1, the colour model is 1×1/);
    expect(() => colourDistortion(pixel([1, 2, 3]), reference([1, 1, 1], [1, 1, 1]), { out: { alpha: new Float32Array(2), cd: new Float32Array(1) } })).toThrow(/length 1/);
  });
});
