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
});
