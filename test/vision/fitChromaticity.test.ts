import { describe, expect, it } from 'vitest';
import { colourDistortion } from '../../src/vision/colourDistortion.ts';
import { fitChromaticity } from '../../src/vision/fitChromaticity.ts';

/** n one-pixel colour frames from per-channel value lists. */
function frames(r: number[], g: number[], b: number[]): Uint8Array[] {
  return r.map((_, t) => Uint8Array.of(r[t], g[t], b[t]));
}

describe('fitChromaticity', () => {
  it('learns the mean and the sample standard deviation per channel', () => {
    // check: the values 2, 4, 4, 4, 5, 5, 7, 9 have mean 5 and population standard deviation 2,
    // so sample standard deviation √(32 / 7) = 2.138 (the textbook example; recalled from memory).
    const r = [2, 4, 4, 4, 5, 5, 7, 9];
    const m = fitChromaticity(frames(r, r.map((v) => 2 * v), r.map((v) => v + 10)), { width: 1, height: 1 });
    expect(m.mean[0]).toBeCloseTo(5, 6);
    expect(m.mean[1]).toBeCloseTo(10, 6);
    expect(m.mean[2]).toBeCloseTo(15, 6);
    expect(m.spread[0]).toBeCloseTo(Math.sqrt(32 / 7), 5);
    expect(m.spread[1]).toBeCloseTo(2 * Math.sqrt(32 / 7), 5);
    expect(m.spread[2]).toBeCloseTo(Math.sqrt(32 / 7), 5);
    expect(m.frameCount).toBe(8);
  });

  it('learns b as the root mean square CD of the learning frames, floored', () => {
    const data = frames([100, 110, 90, 104, 96], [80, 70, 90, 84, 76], [40, 44, 36, 38, 42]);
    const m = fitChromaticity(data, { width: 1, height: 1 });
    // Recomputed here from colourDistortion, frame by frame.
    const cds = data.map((d) => colourDistortion({ width: 1, height: 1, data: d }, m).cd[0]);
    expect(m.chromaSpread[0]).toBeCloseTo(Math.sqrt(cds.reduce((s, v) => s + v * v, 0) / cds.length), 5);
    // Frames on one line through the origin: pure brightness changes, CD 0, b at the floor.
    const line = fitChromaticity(frames([10, 20, 30], [20, 40, 60], [30, 60, 90]), { width: 1, height: 1 }, { chromaSpreadFloor: 0.2 });
    expect(line.chromaSpread[0]).toBeCloseTo(0.2, 6);
    // A constant pixel: σ at the floor.
    const flat = fitChromaticity(frames([50, 50], [50, 50], [50, 50]), { width: 1, height: 1 });
    expect(Array.from(flat.spread)).toEqual([1.5, 1.5, 1.5]);
  });

  it('with robust statistics, uses the median and 1.4826 × the median absolute deviation', () => {
    // check: 1, 1, 2, 2, 4, 6, 9 have median 2 and median absolute deviation 1 (the textbook
    // example of the MAD; recalled from memory).
    const r = [1, 1, 2, 2, 4, 6, 9];
    const m = fitChromaticity(frames(r, r, [9, 1, 6, 2, 4, 2, 1]), { width: 1, height: 1 }, { robust: true, spreadFloor: 0.1 });
    expect(m.mean[0]).toBe(2);
    expect(m.spread[0]).toBeCloseTo(1.4826, 4);
    expect(m.mean[2]).toBe(2); // order does not matter
    // One frame with a person in it barely moves the robust mean, but moves the plain one.
    const empty = Array.from({ length: 9 }, (_, t) => Uint8Array.of(100 + (t % 3), 80 + (t % 2), 40));
    const busy = [...empty, Uint8Array.of(250, 10, 200)];
    expect(fitChromaticity(busy, { width: 1, height: 1 }, { robust: true }).mean[0]).toBeCloseTo(101, 6);
    expect(fitChromaticity(busy, { width: 1, height: 1 }).mean[0]).toBeGreaterThan(114);
    // Even counts: the mean of the two middle values.
    expect(fitChromaticity(frames([1, 3, 5, 100], [1, 1, 1, 1], [1, 1, 1, 1]), { width: 1, height: 1 }, { robust: true }).mean[0]).toBe(4);
  });

  it('checks its inputs', () => {
    expect(() => fitChromaticity([Uint8Array.of(1, 2, 3)], { width: 1, height: 1 })).toThrow(/at least 2/);
    expect(() => fitChromaticity([Uint8Array.of(1, 2, 3), Uint8Array.of(1, 2)], { width: 1, height: 1 })).toThrow(/frame 1 has 2 values, expected 3/);
    expect(() => fitChromaticity(frames([1, 2], [1, 2], [1, 2]), { width: 1, height: 1 }, { spreadFloor: 0 })).toThrow(/spreadFloor/);
  });
});
