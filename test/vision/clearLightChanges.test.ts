import { describe, expect, it } from 'vitest';
import { clearLightChanges } from '../../src/vision/clearLightChanges.ts';

const width = 12;
const height = 10;
const frameOf = (f: (x: number, y: number) => number) => {
  const data = new Float32Array(width * height);
  for (let y = 0; y < height; y++) for (let x = 0; x < width; x++) data[y * width + x] = f(x, y);
  return { width, height, data };
};
const all = () => ({ width, height, data: new Uint8Array(width * height).fill(1) });
const noise = new Float32Array(width * height).fill(2);
const stripes = frameOf((_, y) => (y % 2 === 0 ? 80 : 120));
const count = (m: { data: Uint8Array }) => m.data.reduce((a, v) => a + v, 0);

describe('clearLightChanges', () => {
  it('clears a shadow that keeps the texture (correlation 1, ratio 0.6)', () => {
    // check: a multiplicative change of light leaves the normalised cross-correlation at 1
    // (Grest, Frahm & Koch 2003; common practice in texture-based shadow detection).
    const shadow = frameOf((x, y) => 0.6 * stripes.data[y * width + x]);
    expect(count(clearLightChanges(shadow, stripes, all(), noise))).toBe(0);
  });

  it('keeps a uniform object in front of the texture', () => {
    const object = frameOf(() => 30);
    expect(count(clearLightChanges(object, stripes, all(), noise))).toBe(width * height);
  });

  it('keeps a change of brightness beyond the allowed ratio', () => {
    const dark = frameOf((x, y) => 0.2 * stripes.data[y * width + x]);
    expect(count(clearLightChanges(dark, stripes, all(), noise, { gain: [0.35, 3] }))).toBe(width * height);
  });

  it('leaves flat background alone unless told that a flat change is light', () => {
    const flat = frameOf(() => 100);
    const darker = frameOf(() => 70);
    expect(count(clearLightChanges(darker, flat, all(), noise))).toBe(width * height);
    expect(count(clearLightChanges(darker, flat, all(), noise, { flat: 'light' }))).toBe(0);
  });

  it('only ever clears candidates, reuses its scratch, and names bad sizes', () => {
    const shadow = frameOf((x, y) => 0.6 * stripes.data[y * width + x]);
    const none = { width, height, data: new Uint8Array(width * height) };
    const scratch = new Float64Array(5 * (width + 1) * (height + 1)).fill(7);
    expect(count(clearLightChanges(shadow, stripes, none, noise, { scratch }))).toBe(0);
    expect(count(clearLightChanges(shadow, stripes, all(), noise, { scratch }))).toBe(0);
    expect(() => clearLightChanges(shadow, stripes, all(), new Float32Array(3))).toThrow(/12×10/);
  });
  it('decides each candidate the same whether its window is summed directly or from the tables', () => {
    // check: a brute-force window sum per pixel (the direct path, taken for few candidates) against
    // the summed-area tables (taken for many); a seeded mixture of shadowed and replaced texture.
    let seed = 7;
    const rand = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
    const big = { width: 60, height: 40 };
    const d = big.width * big.height;
    const background = { ...big, data: Float32Array.from({ length: d }, () => 40 + 160 * rand()) };
    const frame = { ...big, data: Float32Array.from(background.data, (v, i) => ((i % big.width) < 30 ? v * (0.5 + 0.1 * rand()) : 20 + 200 * rand())) };
    const sigma = new Float32Array(d).fill(2);
    const few = { ...big, data: new Uint8Array(d) };
    for (let i = 0; i < d; i += 37) few.data[i] = 1;
    const direct = clearLightChanges(frame, background, few, sigma);
    const many = { ...big, data: new Uint8Array(d).fill(1) };
    const tables = clearLightChanges(frame, background, many, sigma);
    let checked = 0;
    for (let i = 0; i < d; i++) {
      if (!few.data[i]) continue;
      checked++;
      expect(direct.data[i], `pixel ${i}`).toBe(tables.data[i]);
    }
    expect(checked).toBeGreaterThan(60);
    // Both outcomes occur: shadowed texture cleared on the left, replaced texture kept on the right.
    expect(count(direct)).toBeGreaterThan(10);
    expect(count(direct)).toBeLessThan(checked - 10);
  });
});
