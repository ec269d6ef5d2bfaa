import { describe, expect, it } from 'vitest';
import { createMask } from '../../src/frames/frame.ts';
import { adaptBackground } from '../../src/vision/adaptBackground.ts';

describe('adaptBackground', () => {
  const width = 4;
  const height = 1;
  it('moves the mean towards a drifted scene by the forgetting factor, on background pixels only', () => {
    const mean = Float32Array.of(100, 100, 100, 100);
    const frame = { width, height, data: Float32Array.of(110, 110, 110, 110) };
    const mask = createMask(width, height);
    mask.data[2] = 1; // a person
    adaptBackground(mean, new Float32Array(0), new Float64Array(0), frame, mask, { rate: 0.1 });
    expect(Array.from(mean)).toEqual([101, 101, 100, 101]);
    // Repeated updates converge geometrically: after n steps the gap is (1 − rate)^n of the first.
    for (let n = 1; n < 50; n++) adaptBackground(mean, new Float32Array(0), new Float64Array(0), frame, mask, { rate: 0.1 });
    expect(mean[0]).toBeCloseTo(110 - 10 * 0.9 ** 50, 3);
    expect(mean[2]).toBe(100);
  });

  it('subtracts what the eigen-images explain before updating', () => {
    const mean = Float32Array.of(0, 0, 0, 0);
    const basis = Float32Array.of(0.5, 0.5, 0.5, 0.5); // one component, pixel-major (k = 1)
    const frame = { width, height, data: Float32Array.of(10, 10, 10, 10) };
    adaptBackground(mean, basis, Float64Array.of(20), frame, createMask(width, height), { rate: 1 });
    expect(Array.from(mean)).toEqual([0, 0, 0, 0]);
  });

  it('absorbs a static object only where allowed and only after it stayed', () => {
    const mean = Float32Array.of(50, 50, 50, 50);
    const frame = { width, height, data: Float32Array.of(50, 200, 200, 50) };
    const mask = createMask(width, height);
    mask.data[1] = 1;
    mask.data[2] = 1;
    const runs = new Uint16Array(4);
    const absorbable = Uint8Array.of(0, 1, 0, 0);
    let absorbed = 0;
    for (let n = 0; n < 3; n++) absorbed += adaptBackground(mean, new Float32Array(0), new Float64Array(0), frame, mask, { absorbable, absorbAfter: 3, foregroundRuns: runs });
    expect(absorbed).toBe(1);
    expect(mean[1]).toBe(200);
    expect(mean[2]).toBe(50);
  });
});
