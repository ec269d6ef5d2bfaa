/**
 * The lighting and sensor process shared by the synthetic scenes.
 *
 * Frame t is rendered from a static albedo image A (background with people/items painted in) as
 *
 *   I(x, y, t) = clip₀²⁵⁵ round( A(x, y) · g(t) · (1 + b · L(t) · M(x, y)) + o(t) + σ·n(x, y, t) )
 *
 * - g(t): global gain (daylight drift), 1 + d·(0.7 sin(2πt/P + φ₁) + 0.3 sin(4πt/P + φ₂)), so
 *   within ±d of 1 (d = `daylight`);
 * - o(t): exposure offset, e·(0.6 sin(2πt/P + φ₃) + 0.4 sin(6πt/P + φ₄)) grey levels, |o| ≤ e;
 * - M: the lamp's pool of light, a Gaussian exp(−r²/2s²) around its centre; L(t) ∈ {0, 1} switches
 *   at `lampSwitches` seeded frames per period, so the lit area has two levels;
 * - n: independent standard normal sensor noise per pixel and frame (Box–Muller, from a hash of
 *   (seed, t, stream)); σ = `noise`;
 * - round and clip: an 8-bit sensor.
 *
 * Everything repeats with period P frames, so empty frames spread over one period show every
 * lighting state the scene will ever have.
 */
import type { NormalisedPoint } from '../../domain/zone.ts';
import { random } from './random.ts';
import type { SceneLamp } from './scene.ts';

export interface LightingOptions {
  /** Seed of the drift phases and lamp switch times; a whole number, default 1. */
  seed?: number;
  /** Frames after which the whole process repeats; a whole number ≥ 10, default 3000. */
  period?: number;
  /** Peak relative deviation of the global gain from 1 (daylight drift); 0..0.5 inclusive, default 0.15. */
  daylight?: number;
  /** Peak exposure offset in grey levels; 0..50 inclusive, default 4. */
  exposure?: number;
  /** The local lamp: centre (normalised), radius (fraction of frame height, > 0) and boost (relative, in (0, 2]); default none. */
  lamp?: { centre: NormalisedPoint; radius: number; boost: number };
  /** Lamp switches per period; an even whole number ≥ 2 when there is a lamp, default 4. */
  lampSwitches?: number;
  /** Sensor noise standard deviation in grey levels; 0..50 inclusive, default 2.5. */
  noise?: number;
}

/** The global lighting of one frame. */
export interface LightingState {
  /** Global gain g(t). */
  readonly gain: number;
  /** Exposure offset o(t), grey levels. */
  readonly offset: number;
  /** Lamp on in this frame (false when there is no lamp). */
  readonly lampOn: boolean;
}

export interface Lighting {
  readonly period: number;
  readonly noise: number;
  /** The lamp as the scene reports it, if any. */
  readonly lamp: SceneLamp | undefined;
  stateAt(t: number): LightingState;
  /**
   * Writes frame t lit from `albedo` into `out` (both width × height). `stream` separates noise
   * draws of renderings that must be independent (empty vs. populated frame of the same t).
   */
  render(albedo: Float32Array, t: number, stream: number, out: Float32Array): void;
}

/** Builds the lighting process of a width × height scene (see the module comment for the model). */
export function lighting(size: { width: number; height: number }, options: LightingOptions = {}): Lighting {
  const { seed = 1, period = 3000, daylight = 0.15, exposure = 4, lamp, lampSwitches = 4, noise = 2.5 } = options;
  const { width, height } = size;
  if (!(Number.isInteger(period) && period >= 10)) throw new RangeError(`lightingPeriod must be a whole number ≥ 10, got ${String(period)}`);
  if (!(daylight >= 0 && daylight <= 0.5)) throw new RangeError(`daylight must be in 0..0.5, got ${String(daylight)}`);
  if (!(exposure >= 0 && exposure <= 50)) throw new RangeError(`exposure must be in 0..50 grey levels, got ${String(exposure)}`);
  if (!(noise >= 0 && noise <= 50)) throw new RangeError(`noise must be in 0..50 grey levels, got ${String(noise)}`);
  if (lamp !== undefined) {
    const [x, y] = lamp.centre;
    if (!(x >= 0 && x <= 1 && y >= 0 && y <= 1)) throw new RangeError(`lamp.centre must be a point in 0..1, got [${x}, ${y}]`);
    if (!(lamp.radius > 0)) throw new RangeError(`lamp.radius must be > 0, got ${String(lamp.radius)}`);
    if (!(lamp.boost > 0 && lamp.boost <= 2)) throw new RangeError(`lamp.boost must be in (0, 2], got ${String(lamp.boost)}`);
  }
  if (lamp !== undefined && !(Number.isInteger(lampSwitches) && lampSwitches >= 2 && lampSwitches % 2 === 0)) {
    throw new RangeError(`lampSwitches must be an even whole number ≥ 2, got ${String(lampSwitches)}`);
  }

  const rng = random(seed, 0x11647);
  const phases = [0, 0, 0, 0].map(() => rng.between(0, 2 * Math.PI));
  const omega = (2 * Math.PI) / period;

  let lampMap: Float32Array | undefined;
  let switchFrames: number[] = [];
  let startsOn = false;
  if (lamp !== undefined) {
    lampMap = new Float32Array(width * height);
    const cx = lamp.centre[0] * width;
    const cy = lamp.centre[1] * height;
    const s = lamp.radius * height;
    const k = -1 / (2 * s * s);
    for (let y = 0; y < height; y++) {
      const dy = y + 0.5 - cy;
      for (let x = 0; x < width; x++) {
        const dx = x + 0.5 - cx;
        lampMap[y * width + x] = Math.exp(k * (dx * dx + dy * dy));
      }
    }
    // Switch times: sorted, at least period / (3 · switches) apart (also across the wrap).
    const minGap = Math.floor(period / (3 * lampSwitches));
    for (let attempt = 0; ; attempt++) {
      const frames = Array.from({ length: lampSwitches }, () => rng.int(0, period - 1)).sort((a, b) => a - b);
      let ok = true;
      for (let i = 0; i < frames.length; i++) {
        const next = i + 1 < frames.length ? frames[i + 1] : frames[0] + period;
        if (next - frames[i] < minGap) ok = false;
      }
      if (ok || attempt > 1000) {
        switchFrames = frames;
        break;
      }
    }
    startsOn = rng.chance(0.5);
  }

  const lampOnAt = (t: number): boolean => {
    if (lampMap === undefined) return false;
    const tau = t % period;
    let on = startsOn;
    for (const f of switchFrames) if (f <= tau) on = !on;
    return on;
  };

  const stateAt = (t: number): LightingState => {
    const a = omega * (t % period);
    return {
      gain: 1 + daylight * (0.7 * Math.sin(a + phases[0]) + 0.3 * Math.sin(2 * a + phases[1])),
      offset: exposure * (0.6 * Math.sin(a + phases[2]) + 0.4 * Math.sin(3 * a + phases[3])),
      lampOn: lampOnAt(t),
    };
  };

  const n = width * height;
  const noiseBuffer = new Float32Array(n);
  const map = lampMap ?? new Float32Array(0);
  const boost = lamp?.boost ?? 0;
  const render = (albedo: Float32Array, t: number, stream: number, out: Float32Array): void => {
    const { gain, offset, lampOn } = stateAt(t);
    const nb = noiseBuffer;
    if (noise > 0) random(seed, t, stream).normals(nb, noise);
    else nb.fill(0);
    // + 0.5 then truncation: round half up (values are ≥ 0.5 there), much faster than Math.round.
    const off = offset + 0.5;
    if (lampOn) {
      const gl = gain * boost;
      for (let i = 0; i < n; i++) {
        const v = albedo[i] * (gain + gl * map[i]) + off + nb[i];
        out[i] = v < 1 ? 0 : v >= 255 ? 255 : v | 0;
      }
    } else {
      for (let i = 0; i < n; i++) {
        const v = albedo[i] * gain + off + nb[i];
        out[i] = v < 1 ? 0 : v >= 255 ? 255 : v | 0;
      }
    }
  };

  const sceneLamp: SceneLamp | undefined =
    lamp === undefined
      ? undefined
      : { centre: lamp.centre, radius: lamp.radius, boost: lamp.boost, switchFrames, onAt: lampOnAt };

  return { period, noise, lamp: sceneLamp, stateAt, render };
}
