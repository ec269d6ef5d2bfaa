import { describe, expect, it } from 'vitest';
import { createMask } from '../../src/domain/frame.ts';
import { suppressShadows } from '../../src/vision/suppressShadows.ts';

// A 4×1 strip whose expected colour is E = (100, 80, 40) with σ = (10, 8, 4) and b = 0.5
// everywhere (the example of suppressShadows' doc comment; α and CD by the formulas of
// Horprasert, Harwood & Davis 1999, worked by hand there).
const model = {
  width: 4,
  height: 1,
  mean: Float32Array.from({ length: 12 }, (_, j) => [100, 80, 40][j % 3]),
  spread: Float32Array.from({ length: 12 }, (_, j) => [10, 8, 4][j % 3]),
  chromaSpread: new Float32Array(4).fill(0.5),
  frameCount: 10,
};
const colour = {
  width: 4,
  height: 1,
  data: Uint8Array.of(
    60, 48, 24, // α 0.6, CD 0: a shadow
    60, 40, 20, // α 0.533, CD 0.82 = 1.6 b: a shadow
    30, 24, 12, // α 0.3: too dark for a shadow
    40, 60, 30, // CD 2.86 = 5.7 b: another colour
  ),
};
const all = () => {
  const m = createMask(4, 1);
  m.data.fill(1);
  return m;
};

describe('suppressShadows', () => {
  it('clears darker pixels of the expected chromaticity and keeps the rest', () => {
    expect(Array.from(suppressShadows(all(), colour, model).data)).toEqual([0, 0, 1, 1]);
    // A stricter chromaticity bound keeps the second pixel; a lower alphaLow clears the third.
    expect(Array.from(suppressShadows(all(), colour, model, { maxChromaDistortion: 1.5 }).data)).toEqual([0, 1, 1, 1]);
    expect(Array.from(suppressShadows(all(), colour, model, { alphaLow: 0.25 }).data)).toEqual([0, 0, 0, 1]);
    // alphaHigh is exclusive: α = 0.6 is not below 0.6.
    expect(Array.from(suppressShadows(all(), colour, model, { alphaLow: 0.5, alphaHigh: 0.6 }).data)).toEqual([1, 0, 1, 1]);
  });

  it('never sets a pixel, and leaves the input mask alone unless it is the out mask', () => {
    const mask = createMask(4, 1);
    mask.data[0] = 1;
    mask.data[3] = 1;
    const result = suppressShadows(mask, colour, model);
    expect(Array.from(result.data)).toEqual([0, 0, 0, 1]);
    expect(Array.from(mask.data)).toEqual([1, 0, 0, 1]);
    expect(suppressShadows(mask, colour, model, { out: mask })).toBe(mask);
    expect(Array.from(mask.data)).toEqual([0, 0, 0, 1]);
  });

  it('measures brightness against brightnessScale', () => {
    // The frame is expected at 0.6 of the mean here (a lamp off): the first pixel is then as
    // bright as expected, α/0.6 = 1, not a shadow; the third, α/0.6 = 0.5, becomes one.
    const scale = Float32Array.of(0.6, 1, 0.6, 1);
    expect(Array.from(suppressShadows(all(), colour, model, { brightnessScale: scale }).data)).toEqual([1, 0, 0, 1]);
    // Unusable scale values count as 1.
    expect(Array.from(suppressShadows(all(), colour, model, { brightnessScale: Float32Array.of(0, NaN, -1, Infinity) }).data)).toEqual([0, 0, 1, 1]);
  });

  it('checks its options', () => {
    expect(() => suppressShadows(all(), colour, model, { alphaLow: 1.2 })).toThrow(/alphaLow must be in 0..1/);
    expect(() => suppressShadows(all(), colour, model, { alphaLow: 0.6, alphaHigh: 0.6 })).toThrow(/alphaHigh must be in \(alphaLow, 1\]/);
    expect(() => suppressShadows(all(), colour, model, { maxChromaDistortion: 0 })).toThrow(/maxChromaDistortion must be > 0/);
    expect(() => suppressShadows(createMask(2, 2), colour, model)).toThrow(/mask is 2×2/);
    expect(() => suppressShadows(all(), colour, model, { brightnessScale: new Float32Array(3) })).toThrow(/brightnessScale has length 3/);
  });
});
