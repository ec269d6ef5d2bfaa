/**
 * Slow illumination drift laid over a synthetic scene: the afternoon sun. Invented data for the
 * drift-adaptation checks; the scene's people, items and truth are unchanged.
 *
 * Frame t of the drifting scene is frame t of the base scene multiplied by an illumination field
 * and rounded and clipped to 8 bits again:
 *
 *   I'(x, y, t) = clip₀²⁵⁵ round( I(x, y, t) · (1 + w·s(p)·(1 − x) + b·sin(πp)·S(x, y, p)) )
 *
 * + σ·n(x, y, t)
 *
 * with p = (t − start) / duration clamped to 0..1 (the progress of the afternoon, 0 before
 * `start`), s(p) = 3p² − 2p³ (smoothstep), so that
 *
 * - daylight through a window at the left edge brightens the view in a ramp falling from w at
 *   the left edge to 0 at the right (x normalised), growing over the whole run;
 * - a sunbeam: a soft-edged parallelogram S (1 inside, 0 outside, linear edges `softness` wide),
 *   whose centre moves in a straight line from `beam.from` to `beam.to`, comes out and fades
 *   again (brightness b·sin(πp): strongest halfway).
 *
 * People and items are lit too (the field multiplies the whole rendered frame). The field is
 * smooth in time: no pixel changes by more than a fraction of a grey level from one frame to the
 * next for runs of thousands of frames, which is what "slow drift" means here.
 */
import type { GreyFrame } from '../../domain/frame.ts';
import type { NormalisedPoint } from '../../domain/zone.ts';
import { random } from './random.ts';
import { assertFrameIndex, outputFrame, type SyntheticScene } from './scene.ts';

export interface SlowDriftOptions {
  /** Frame at which the drift starts (the view is the base scene's before it); whole number ≥ 0, default 0. */
  start?: number;
  /** Frames from start to the end of the drift (afterwards it stays at its end state); whole number ≥ 1, default 6000. */
  duration?: number;
  /** Extra relative brightness at the left edge at the end (window light); 0..2 inclusive, default 0.25. */
  window?: number;
  /**
   * Sensor noise added after the drift, standard deviation in grey levels, 0..50 inclusive;
   * default 0. Give the base scene `noise: 0` and the noise here, so that the sensor noise does not
   * grow with the light (a base scene's own noise would be multiplied by the field).
   */
  noise?: number;
  /** Seed of that noise; a whole number, default 1. */
  seed?: number;
  /** The sunbeam; default a patch crossing the floor from the left to the right. `boost: 0` removes it. */
  beam?: {
    /** Centre at the start, normalised. */
    readonly from: NormalisedPoint;
    /** Centre at the end, normalised. */
    readonly to: NormalisedPoint;
    /** Width and height of the patch, normalised (> 0). */
    readonly size: readonly [number, number];
    /** Horizontal shift per unit of height (the slant of the patch); default 0.5. */
    readonly slant?: number;
    /** Width of the linear edge ramp, normalised (> 0); default 0.06. */
    readonly softness?: number;
    /** Extra relative brightness at the patch's peak (0.6 = 60 % brighter); 0..2 inclusive. */
    readonly boost: number;
  };
}

const defaultBeam = { from: [0.2, 0.72], to: [0.85, 0.66], size: [0.3, 0.34], slant: 0.5, softness: 0.06, boost: 0.6 } as const;

/**
 * The base scene with slow drift (see the module comment). Random access like the base scene:
 * frame t does not depend on the frames rendered before.
 *
 * Example: withSlowDrift(createReadingRoom(), { start: 300 }).frameAt(0) is the reading room's
 * frame 0; frameAt(3300) is lit by the sunbeam at its brightest, halfway across the floor.
 */
export function withSlowDrift(scene: SyntheticScene, options: SlowDriftOptions = {}): SyntheticScene {
  const { start = 0, duration = 6000, window = 0.25, noise = 0, seed = 1, beam = defaultBeam } = options;
  assertFrameIndex(start, 'start');
  if (!(Number.isInteger(duration) && duration >= 1)) throw new RangeError(`duration must be a whole number ≥ 1, got ${String(duration)}`);
  if (!(noise >= 0 && noise <= 50)) throw new RangeError(`noise must be in 0..50 grey levels, got ${String(noise)}`);
  if (!(window >= 0 && window <= 2)) throw new RangeError(`window must be in 0..2, got ${String(window)}`);
  if (!(beam.boost >= 0 && beam.boost <= 2)) throw new RangeError(`beam.boost must be in 0..2, got ${String(beam.boost)}`);
  if (!(beam.size[0] > 0 && beam.size[1] > 0)) throw new RangeError(`beam.size must be two sizes > 0, got [${beam.size.join(', ')}]`);
  const softness = beam.softness ?? 0.06;
  if (!(softness > 0)) throw new RangeError(`beam.softness must be > 0, got ${String(softness)}`);
  const slant = beam.slant ?? 0.5;
  const { width, height } = scene;
  const d = width * height;
  const field = new Float32Array(d);
  const sensor = new Float32Array(d);
  let fieldAt = -1;

  /** Fills `field` for progress p of frame t (cached for the last t). */
  const fill = (t: number, p: number): void => {
    if (fieldAt === t) return;
    fieldAt = t;
    const ramp = window * p * p * (3 - 2 * p);
    const peak = beam.boost * Math.sin(Math.PI * p);
    const cx = beam.from[0] + (beam.to[0] - beam.from[0]) * p;
    const cy = beam.from[1] + (beam.to[1] - beam.from[1]) * p;
    const hw = beam.size[0] / 2;
    const hh = beam.size[1] / 2;
    const edge = (inside: number) => Math.min(1, Math.max(0, 0.5 + inside / softness));
    for (let y = 0; y < height; y++) {
      const ny = (y + 0.5) / height;
      const v = ny - cy;
      const across = peak > 0 ? edge(hh - Math.abs(v)) : 0;
      for (let x = 0; x < width; x++) {
        const nx = (x + 0.5) / width;
        let f = 1 + ramp * (1 - nx);
        if (across > 0) f += peak * across * edge(hw - Math.abs(nx - cx - slant * v));
        field[y * width + x] = f;
      }
    }
  };

  const progress = (t: number) => Math.min(1, Math.max(0, (t - start) / duration));
  const apply = (t: number, stream: number, frame: GreyFrame): GreyFrame => {
    const p = progress(t);
    if (p === 0 && noise === 0) return frame;
    if (p > 0) fill(t, p);
    if (noise > 0) random(seed, t, stream, 0xd71f7).normals(sensor, noise);
    const data = frame.data;
    for (let i = 0; i < d; i++) {
      // + 0.5 then truncation: round half up, as the scenes' own sensor.
      const v = (p > 0 ? data[i] * field[i] : data[i]) + sensor[i] + 0.5;
      data[i] = v < 1 ? 0 : v >= 255 ? 255 : v | 0;
    }
    return frame;
  };

  return {
    id: `${scene.id}+drift`,
    name: `${scene.name}, afternoon sun`,
    width,
    height,
    zones: scene.zones,
    frameRate: scene.frameRate,
    lightingPeriod: scene.lightingPeriod,
    ...(scene.lamp !== undefined && { lamp: scene.lamp }),
    emptyFrameAt(t, out) {
      assertFrameIndex(t);
      return apply(t, 1, scene.emptyFrameAt(t, out === undefined ? undefined : outputFrame(width, height, out)));
    },
    frameAt(t, out) {
      assertFrameIndex(t);
      const { frame, truth } = scene.frameAt(t, out === undefined ? undefined : outputFrame(width, height, out));
      return { frame: apply(t, 0, frame), truth };
    },
    objectsAt: (t) => scene.objectsAt(t),
  };
}
