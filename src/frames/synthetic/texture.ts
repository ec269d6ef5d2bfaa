/**
 * Smooth random texture for the synthetic backgrounds: value noise (random values on a coarse
 * lattice, interpolated bilinearly with the smoothstep weight 3s² − 2s³, as in Perlin's 1985
 * "An image synthesizer", without gradients), summed over octaves of halving cell size and
 * amplitude.
 *
 * Example: texture({ width: 320, height: 240 }, { cellX: 16, cellY: 16 }) is a cloudy pattern with
 * blobs about 16 px across, values within −1..1.
 */
import { random } from './random.ts';

export interface TextureOptions {
  /** Seed of the lattice values; a whole number, default 1. */
  seed?: number;
  /** Lattice spacing along x of the first octave, pixels > 0; default 16. */
  cellX?: number;
  /** Lattice spacing along y of the first octave, pixels > 0; default 16 (a small value with a large cellX gives streaks, like wood grain). */
  cellY?: number;
  /** Octaves summed, each with half the cell size and half the amplitude; whole number 1..6 inclusive, default 2. */
  octaves?: number;
}

/** A width × height texture with values in −1..1 inclusive (row-major, like GreyFrame). */
export function texture(size: { width: number; height: number }, options: TextureOptions = {}): Float32Array {
  const { seed = 1, cellX = 16, cellY = 16, octaves = 2 } = options;
  if (!(cellX > 0 && cellY > 0)) throw new RangeError(`cellX and cellY must be > 0, got ${cellX}, ${cellY}`);
  if (!(Number.isInteger(octaves) && octaves >= 1 && octaves <= 6)) throw new RangeError(`octaves must be a whole number in 1..6, got ${String(octaves)}`);
  const { width, height } = size;
  const out = new Float32Array(width * height);
  let amplitude = 1;
  let total = 0;
  for (let o = 0; o < octaves; o++) {
    const cx = Math.max(1, cellX / 2 ** o);
    const cy = Math.max(1, cellY / 2 ** o);
    const gw = Math.ceil(width / cx) + 2;
    const gh = Math.ceil(height / cy) + 2;
    const rng = random(seed, 0x7e47, o);
    const grid = new Float32Array(gw * gh);
    for (let i = 0; i < grid.length; i++) grid[i] = rng.between(-1, 1);
    for (let y = 0; y < height; y++) {
      const gy = (y + 0.5) / cy;
      const j = Math.floor(gy);
      const sy = smooth(gy - j);
      for (let x = 0; x < width; x++) {
        const gx = (x + 0.5) / cx;
        const i = Math.floor(gx);
        const sx = smooth(gx - i);
        const a = grid[j * gw + i] + (grid[j * gw + i + 1] - grid[j * gw + i]) * sx;
        const b = grid[(j + 1) * gw + i] + (grid[(j + 1) * gw + i + 1] - grid[(j + 1) * gw + i]) * sx;
        out[y * width + x] += amplitude * (a + (b - a) * sy);
      }
    }
    total += amplitude;
    amplitude /= 2;
  }
  for (let i = 0; i < out.length; i++) out[i] /= total;
  return out;
}

function smooth(s: number): number {
  return s * s * (3 - 2 * s);
}
