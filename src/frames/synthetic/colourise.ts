/**
 * Colour rendering for the synthetic scenes: an RGB frame whose grey, by the conversion sharp
 * applies in decodeImage (libvips B_W: linearise sRGB, Y = 0.2126 R + 0.7152 G + 0.0722 B, the
 * ITU-R BT.709 luminance weights, encode with the sRGB curve of IEC 61966-2-1), is the grey frame
 * it was made from, to within one level of 8-bit rounding.
 *
 * Each pixel has a tint k = (k_R, k_G, k_B) with 0.2126 k_R + 0.7152 k_G + 0.0722 k_B = 1: the
 * pixel's colour in linear light is k·Y, whose luminance is Y whatever the hue. Sensor colour
 * noise is added in linear light within the plane of zero luminance (n₁u₁ + n₂u₂ for two normal
 * draws and an orthonormal basis u₁, u₂ of the vectors v with w·v = 0, w the luminance weights),
 * so it changes chromaticity and never the grey. Where k·Y plus
 * noise would leave 0..1, the pixel's deviation from neutral grey is scaled down until it fits,
 * which also keeps its luminance.
 */
import type { GreyFrame } from '../../domain/frame.ts';
import { outputColourFrame, type ColourFrame } from '../../domain/colourFrame.ts';

export interface ColouriseOptions {
  /** Standard normal draws, 2 per pixel (interleaved), for the colour noise; default none (no colour noise). */
  noise?: Float32Array;
  /** Standard deviation of the colour noise per channel, in 8-bit levels at the pixel's grey level; 0..50 inclusive, default 2.5. */
  noiseLevel?: number;
  /** Colour frame to write into instead of allocating. */
  out?: ColourFrame;
}

/** BT.709 / sRGB luminance weights of linear R, G, B (they sum to 1). */
export const LUMA = [0.2126, 0.7152, 0.0722] as const;

/** The sRGB decoding curve (IEC 61966-2-1): encoded 0..1 → linear 0..1. */
export function srgbToLinear(v: number): number {
  return v <= 0.04045 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4;
}

/** The sRGB encoding curve: linear 0..1 → encoded 0..1. */
export function linearToSrgb(x: number): number {
  return x <= 0.0031308 ? 12.92 * x : 1.055 * x ** (1 / 2.4) - 0.055;
}

/** An orthonormal basis u₁, u₂ of the plane w·v = 0 (w = LUMA): u₁ ∝ red minus its luminance part, u₂ = ŵ × u₁. */
const [U1, U2] = (() => {
  const norm = Math.hypot(...LUMA);
  const w = LUMA.map((c) => c / norm);
  const raw = [1 - w[0] * w[0], -w[0] * w[1], -w[0] * w[2]];
  const l = Math.hypot(...raw);
  const u1 = raw.map((c) => c / l);
  const u2 = [w[1] * u1[2] - w[2] * u1[1], w[2] * u1[0] - w[0] * u1[2], w[0] * u1[1] - w[1] * u1[0]];
  return [u1, u2];
})();

/** Linear value of each 8-bit level, and the slope of the curve there (linear per level). */
const LINEAR = new Float64Array(256);
const SLOPE = new Float64Array(256);
for (let v = 0; v < 256; v++) {
  LINEAR[v] = srgbToLinear(v / 255);
  const u = v / 255;
  SLOPE[v] = (u <= 0.04045 ? 1 / 12.92 : (2.4 / 1.055) * ((u + 0.055) / 1.055) ** 1.4) / 255;
}

/**
 * The 8-bit sRGB level nearest to a linear value: the number of midpoints between levels at or
 * below it (the same result as round(255 · linearToSrgb(x)) without a power per channel). A
 * table over 4096 bins of the linear range gives the level at a bin's lower end; the curve rises
 * by less than one level within a bin, so at most a step or two remains.
 */
const MIDPOINT = Float64Array.from({ length: 256 }, (_, k) => (k < 255 ? srgbToLinear((k + 0.5) / 255) : Infinity));
const BINS = 4096;
const START = new Uint8Array(BINS + 1);
for (let b = 0, k = 0; b <= BINS; b++) {
  while (MIDPOINT[k] <= b / BINS) k++;
  START[b] = k;
}
function encode8(x: number): number {
  let k = START[(x * BINS) | 0];
  while (MIDPOINT[k] <= x) k++;
  return k;
}

/**
 * Makes the colour frame of `grey` with the per-pixel tints `tint` (3 values per pixel, each
 * triple of luminance 1; see the module comment).
 *
 * Example: grey level 128 with the neutral tint (1, 1, 1) and no noise gives (128, 128, 128);
 * with tint (1.5, 0.8514, 1) it gives a warm colour whose grey is again 128.
 */
export function colourise(grey: GreyFrame, tint: Float32Array, options: ColouriseOptions = {}): ColourFrame {
  const { noise, noiseLevel = 2.5, out } = options;
  const { width, height, data } = grey;
  const d = width * height;
  if (tint.length !== 3 * d) throw new RangeError(`tint has length ${tint.length}, expected ${3 * d}`);
  if (noise !== undefined && noise.length !== 2 * d) throw new RangeError(`noise has length ${noise.length}, expected ${2 * d}`);
  if (!(noiseLevel >= 0 && noiseLevel <= 50)) throw new RangeError(`noiseLevel must be in 0..50 levels, got ${noiseLevel}`);
  const frame = outputColourFrame(width, height, out);
  const rgb = frame.data;
  const [u1r, u1g, u1b] = U1;
  const [u2r, u2g, u2b] = U2;
  for (let i = 0, j = 0; i < d; i++, j += 3) {
    const g = data[i];
    const v = g <= 0 ? 0 : g >= 255 ? 255 : Math.round(g);
    const y = LINEAR[v];
    let dr = (tint[j] - 1) * y;
    let dg = (tint[j + 1] - 1) * y;
    let db = (tint[j + 2] - 1) * y;
    if (noise !== undefined && noiseLevel > 0) {
      const s = noiseLevel * SLOPE[v];
      const n1 = s * noise[2 * i];
      const n2 = s * noise[2 * i + 1];
      dr += n1 * u1r + n2 * u2r;
      dg += n1 * u1g + n2 * u2g;
      db += n1 * u1b + n2 * u2b;
    }
    // Scale the deviation from grey so that every channel stays within 0..1.
    let scale = 1;
    scale = fit(y, dr, scale);
    scale = fit(y, dg, scale);
    scale = fit(y, db, scale);
    rgb[j] = encode8(y + scale * dr);
    rgb[j + 1] = encode8(y + scale * dg);
    rgb[j + 2] = encode8(y + scale * db);
  }
  return frame;
}

/** The largest s ≤ scale with y + s·dc within 0..1. */
function fit(y: number, dc: number, scale: number): number {
  if (dc > 0 && y + scale * dc > 1) return (1 - y) / dc;
  if (dc < 0 && y + scale * dc < 0) return y / -dc;
  return scale;
}
