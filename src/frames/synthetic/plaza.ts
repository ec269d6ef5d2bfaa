/**
 * Synthetic scene: a sunny town square seen from a camera high up on a building across from it,
 * looking obliquely down over the paving at the façade opposite. Invented data, no real people:
 * passers-by are soft-edged grey ellipses with a head, their shadows soft dark ellipses.
 *
 * Layout (normalised x right, y down):
 *
 * ```
 *  y 0.00 ┌──────────────────────────────────────────────┐
 *         │ ▯   ▯   ▯   ▯   ▯   ▯   ▯   ▯   ▯   ▯        │  façade in shade, two floors of
 *         │ ▯   ▯   ▯   ▯   ▯   ▯   ▯   ▯   ▯   ▯        │  windows; now and then a sun patch
 *  y 0.15 │══════════════════════════════════════════════│  string course
 *         │   ∩       ∩       ∩       ∩       ∩          │  arcade: walkers come and go here
 *  y 0.25 ├──────────────────────────────────────────────┤  far edge of the paving
 *  y 0.26 │ ┌┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┐ │  square, far half (people 0.07
 *         │ ┊                       ◯ ring             ┊ │  of the frame height at y 0.25)
 *  y 0.51 │ ┊═════ band of darker stone ═══════════════┊ │
 *  y 0.61 │ ┊┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┊ │  near half
 *         │ ┊ slabs in running bond, joints converging ┊ │
 *  y 0.96 │ └┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┈┘ │  (people 0.28 of the frame height
 *  y 1.00 └──────────────────────────────────────────────┘  at y 1)
 *
 *  ← → walkers cross from the sides, ↑ ↓ come from behind the camera or the arcade, ↗ ↘ go
 *  diagonally; groups of 2–3 side by side; some keep to the far edge; one stands still a while.
 * ```
 *
 * Perspective (plazaGeometry.ts): a pinhole camera over the ground plane, so a standing
 * person's drawn height is proportional to the distance of their foot row from the horizon
 * (`horizon`, above the frame): h(y) = nearHeight · (y − horizon) / (1 − horizon). The truth
 * of a person's expected drawn area is `personAreaAt(y)`.
 *
 * The square is never empty (plazaSchedule.ts): walkers cross it left↔right, towards and away
 * from the camera and diagonally, entering and leaving at the frame edges or through the
 * arcade at the far edge; a third of the parties are groups of 2–3 walking side by side whose
 * figures overlap (one merged blob); some walk along the far edge only; and now and then one
 * person stops and stands still on the square for minutes. The scene starts in steady state
 * (people already in view at t = 0), with `meanPeople` in view on average. A quarter of the
 * people wear clothes only 12–20 grey levels away from the paving.
 *
 * Light: sunshine. Every person casts a soft shadow on the paving next to their feet (fixed sun
 * direction, length proportional to their drawn height, 0.6–0.75 of the paving's brightness
 * left in it; plazaPerson.ts); shadows fall on the paving only and are not people: the truth
 * ignores them. A slow global brightness drift (passing clouds: within ±`cloudDrift`, three
 * sinusoids of about 70, 40 and 23 s), and a sun patch: a soft-edged slanted patch of sunlight
 * on the façade (up to 1 + `sunPatchBoost` times as bright) that fades in, slides a little
 * sideways and fades out over `sunPatchSeconds`, once every `sunPatchEvery` seconds starting
 * `sunPatchFirst` seconds into each cycle. People in front of the façade are not lit by it.
 * emptyFrameAt(t) shows the same light with no people and no shadows. Then, per pixel,
 *
 *   I = clip₀²⁵⁵ round( A · g(t) + σ·n )
 *
 * with A the albedo (background lit by the sun patch, shadows, people painted over), g(t) the
 * cloud drift and n standard normal sensor noise (σ = `noise`) drawn from (seed, t, stream).
 * The whole lighting repeats every `sunPatchEvery` seconds (`lightingPeriod` frames).
 *
 * Zones: `square`, a room zone over the paving that keeps a margin from the frame edges, and
 * (option `halves`) its `far` and `near` halves. They give neither `personArea` nor
 * `minBlobArea`: the counter must find the size of a person itself. Truth per zone: the number
 * of people whose foot point (bottom centre of the drawn bounding box) lies in the zone polygon
 * (even–odd rule of domain/pointInPolygon). The margins keep every counted person entirely
 * inside the frame.
 *
 * The walk schedule is generated once from the seed for one hour of scene time and repeats.
 */
import type { GreyFrame } from '../../domain/frame.ts';
import type { NormalisedPoint, Zone } from '../../domain/zone.ts';
import { pointInPolygon } from '../../domain/pointInPolygon.ts';
import { plazaBackground } from './plazaBackground.ts';
import { plazaGeometry } from './plazaGeometry.ts';
import { castShadow, drawPerson, personBox, SHAPE, shapeUnitArea } from './plazaPerson.ts';
import { footPoints, plazaSchedule, type Member } from './plazaSchedule.ts';
import { random } from './random.ts';
import {
  assertFrameIndex,
  outputFrame,
  Posture,
  SceneObjectKind,
  type SceneObject,
  type SceneTruth,
  type SyntheticScene,
} from './scene.ts';

export interface PlazaOptions {
  /** Seed of the paving, the walks and the light; a whole number, default 1. */
  seed?: number;
  /** Frame width in pixels; whole number 64..4096 inclusive, default 320. */
  width?: number;
  /** Frame height in pixels; whole number 48..4096 inclusive, default 240. People scale with it. */
  height?: number;
  /** Frames per second of scene time (walking speeds and durations are per second); > 0 and ≤ 120, default 10. */
  frameRate?: number;
  /** Sensor noise standard deviation, grey levels; 0..50 inclusive, default 2.5. */
  noise?: number;
  /** Mean number of people in view (at least partly in the frame); 1..40 inclusive, default 6. */
  meanPeople?: number;
  /** Share of the parties that are groups of 2 or 3; 0..1 inclusive, default 1/3. */
  groupShare?: number;
  /** Share of the parties that walk along the far edge only; 0..1 inclusive, default 0.15. */
  farShare?: number;
  /** Horizon row, normalised (negative: above the frame); −2..0.15 inclusive, default −0.02. */
  horizon?: number;
  /**
   * Drawn height of a standing person with feet on the bottom row, fraction of the frame height;
   * 0.05..0.6 inclusive, default 0.28 (then 0.074 at the paving's far edge, row 0.25).
   */
  nearHeight?: number;
  /** Cast shadows of people on the paving; default true. */
  shadows?: boolean;
  /** Peak relative deviation of the global brightness from 1 (clouds); 0..0.3 inclusive, default 0.04. */
  cloudDrift?: number;
  /** Seconds between sun patches on the façade, also the period of all lighting; 30..3600 inclusive, default 300. */
  sunPatchEvery?: number;
  /** Seconds into each cycle at which the sun patch begins; 0 ≤ first < sunPatchEvery, default 60. */
  sunPatchFirst?: number;
  /** Seconds the sun patch lasts (fade in, slide, fade out); 5..sunPatchEvery inclusive, default 60. */
  sunPatchSeconds?: number;
  /** Extra relative brightness in the sun patch's core (0.45 = 1.45 times as bright); 0..1 inclusive, 0 = no patch; default 0.45. */
  sunPatchBoost?: number;
  /** Seconds the stander stands still on the square; 0..1800 inclusive, 0 = nobody stops; default 240. */
  standSeconds?: number;
  /**
   * Seconds between the stander's visits (the hour's schedule holds round(3600 / standEvery) of
   * them, evenly spaced); ≥ standSeconds + 60 and ≤ 3600, default 600.
   */
  standEvery?: number;
  /** Add the `far` and `near` halves of the square as zones; default true. */
  halves?: boolean;
}

/** The plaza scene: truth helpers on top of the SyntheticScene contract. */
export interface PlazaScene extends SyntheticScene {
  /** Length of the walk schedule in frames; frame t shows the walks at t mod schedulePeriod. */
  readonly schedulePeriod: number;
  /** Horizon row, normalised (as the option). */
  readonly horizon: number;
  /** Whether the people cast shadows (as the option). */
  readonly shadows: boolean;
  /** Drawn height of a standing person of mean size with feet on normalised row y, fraction of the frame height. */
  personHeightAt(y: number): number;
  /**
   * Expected drawn area of one standing person with feet on normalised row y, fraction of the
   * frame area: the area inside the shape's half-coverage contours, averaged over the people's
   * sizes (0.93–1.07 of the mean height).
   */
  personAreaAt(y: number): number;
  /** Whether the sun patch lights the façade in frame t (its brightness is above zero). */
  sunPatchAt(t: number): boolean;
}

interface Drawn {
  readonly member: Member;
  readonly group: string | undefined;
  readonly x: number;
  readonly y: number;
}

const PAVING_TOP = 0.25;
const SQUARE_TOP = 0.26;
const SQUARE_BOTTOM = 0.96;
const SCHEDULE_SECONDS = 3600;
/** Periods (s) of the three cloud-drift sinusoids and their weights. */
const CLOUDS = [
  [70, 0.5],
  [40, 0.3],
  [23, 0.2],
] as const;
const EMPTY_STREAM = 1;
const PEOPLE_STREAM = 0;

/**
 * Builds the plaza (see the module comment).
 *
 * Example: createPlaza().frameAt(0).truth is { square: { count: n }, far: …, near: … } with
 * n ≥ 1; createPlaza().personAreaAt(0.9) / createPlaza().personAreaAt(0.35) = (0.92 / 0.37)².
 */
export function createPlaza(options: PlazaOptions = {}): PlazaScene {
  const {
    seed = 1,
    width = 320,
    height = 240,
    frameRate = 10,
    noise = 2.5,
    meanPeople = 6,
    groupShare = 1 / 3,
    farShare = 0.15,
    horizon = -0.02,
    nearHeight = 0.28,
    shadows = true,
    cloudDrift = 0.04,
    sunPatchEvery = 300,
    sunPatchFirst = 60,
    sunPatchSeconds = 60,
    sunPatchBoost = 0.45,
    standSeconds = 240,
    standEvery = 600,
    halves = true,
  } = options;
  if (!Number.isInteger(seed)) throw new RangeError(`seed must be a whole number, got ${String(seed)}`);
  if (!(Number.isInteger(width) && width >= 64 && width <= 4096)) throw new RangeError(`width must be a whole number in 64..4096, got ${String(width)}`);
  if (!(Number.isInteger(height) && height >= 48 && height <= 4096)) throw new RangeError(`height must be a whole number in 48..4096, got ${String(height)}`);
  if (!(frameRate > 0 && frameRate <= 120)) throw new RangeError(`frameRate must be in (0, 120] frames per second, got ${String(frameRate)}`);
  if (!(noise >= 0 && noise <= 50)) throw new RangeError(`noise must be in 0..50 grey levels, got ${String(noise)}`);
  if (!(meanPeople >= 1 && meanPeople <= 40)) throw new RangeError(`meanPeople must be in 1..40, got ${String(meanPeople)}`);
  if (!(groupShare >= 0 && groupShare <= 1)) throw new RangeError(`groupShare must be in 0..1, got ${String(groupShare)}`);
  if (!(farShare >= 0 && farShare <= 1)) throw new RangeError(`farShare must be in 0..1, got ${String(farShare)}`);
  if (!(horizon >= -2 && horizon <= 0.15)) throw new RangeError(`horizon must be in −2..0.15 (normalised row), got ${String(horizon)}`);
  if (!(nearHeight >= 0.05 && nearHeight <= 0.6)) throw new RangeError(`nearHeight must be in 0.05..0.6 (fraction of the frame height), got ${String(nearHeight)}`);
  if (typeof shadows !== 'boolean') throw new TypeError(`shadows must be true or false, got ${String(shadows)}`);
  if (!(cloudDrift >= 0 && cloudDrift <= 0.3)) throw new RangeError(`cloudDrift must be in 0..0.3, got ${String(cloudDrift)}`);
  if (!(sunPatchEvery >= 30 && sunPatchEvery <= 3600)) throw new RangeError(`sunPatchEvery must be in 30..3600 seconds, got ${String(sunPatchEvery)}`);
  if (!(sunPatchFirst >= 0 && sunPatchFirst < sunPatchEvery)) throw new RangeError(`sunPatchFirst must be in [0, sunPatchEvery) seconds, got ${String(sunPatchFirst)}`);
  if (!(sunPatchSeconds >= 5 && sunPatchSeconds <= sunPatchEvery)) throw new RangeError(`sunPatchSeconds must be in 5..sunPatchEvery seconds, got ${String(sunPatchSeconds)}`);
  if (!(sunPatchBoost >= 0 && sunPatchBoost <= 1)) throw new RangeError(`sunPatchBoost must be in 0..1, got ${String(sunPatchBoost)}`);
  if (!(standSeconds >= 0 && standSeconds <= 1800)) throw new RangeError(`standSeconds must be in 0..1800 seconds, got ${String(standSeconds)}`);
  if (!(standEvery >= standSeconds + 60 && standEvery <= 3600)) throw new RangeError(`standEvery must be in (standSeconds + 60)..3600 seconds, got ${String(standEvery)}`);
  if (typeof halves !== 'boolean') throw new TypeError(`halves must be true or false, got ${String(halves)}`);

  const geometry = plazaGeometry({ width, height }, { horizon, nearHeight, pavingTop: PAVING_TOP });
  const frameArea = width * height;
  const topRow = Math.round(PAVING_TOP * height);
  const { albedo: background, pavingMean } = plazaBackground(geometry, seed);

  // Zones: the paving, kept far enough from the side edges that a person counted there is
  // entirely in the frame (half the widest figure at the bottom of the square, plus the soft edge).
  const halfWidest = ((1.07 * SHAPE.rx) / SHAPE.tall) * geometry.heightAt(SQUARE_BOTTOM) * (height / width);
  const mx = Math.ceil(1000 * Math.max(0.03, halfWidest + 2 / width + 0.005)) / 1000;
  const rect = (y0: number, y1: number): NormalisedPoint[] => [[mx, y0], [1 - mx, y0], [1 - mx, y1], [mx, y1]];
  const middle = (SQUARE_TOP + SQUARE_BOTTOM) / 2;
  const zones: Zone[] = [{ id: 'square', name: 'Square', kind: 'room', polygon: rect(SQUARE_TOP, SQUARE_BOTTOM) }];
  if (halves) {
    zones.push({ id: 'far', name: 'Square, far half', kind: 'room', polygon: rect(SQUARE_TOP, middle) });
    zones.push({ id: 'near', name: 'Square, near half', kind: 'room', polygon: rect(middle, SQUARE_BOTTOM) });
  }
  const squarePolygon = zones[0].polygon;

  const schedulePeriod = Math.round(SCHEDULE_SECONDS * frameRate);
  const walks = plazaSchedule({
    rng: random(seed, 0x91a2a),
    geometry,
    frameRate,
    period: schedulePeriod,
    meanPeople,
    groupShare,
    farShare,
    standSeconds,
    standEvery,
    pavingMean,
    inSquare: (x, y) => pointInPolygon(x, y, squarePolygon),
  });
  const maxMembers = 3;
  const foot = new Float64Array(2 * maxMembers);

  // Light.
  const lightingPeriod = Math.round(sunPatchEvery * frameRate);
  const lightRng = random(seed, 0x5a7c4);
  const clouds = CLOUDS.map(([seconds, weight]) => ({
    cycles: Math.max(1, Math.round(sunPatchEvery / seconds)),
    weight,
    phase: lightRng.between(0, 2 * Math.PI),
  }));
  const gainAt = (t: number): number => {
    const a = (2 * Math.PI * (t % lightingPeriod)) / lightingPeriod;
    let d = 0;
    for (const c of clouds) d += c.weight * Math.sin(c.cycles * a + c.phase);
    return 1 + cloudDrift * d;
  };
  const patchFirst = Math.round(sunPatchFirst * frameRate);
  const patchFrames = Math.max(2, Math.round(sunPatchSeconds * frameRate));
  const patchRamp = Math.max(1, Math.round(0.15 * patchFrames));
  const patch = {
    x: lightRng.between(0.3, 0.7),
    y: 0.105,
    halfW: 0.13,
    halfH: 0.085,
    slant: 0.35,
    slide: (lightRng.chance(0.5) ? 1 : -1) * 0.06,
    soft: 6 * (height / 240),
  };
  /** Sun patch brightness envelope in frame t, 0..1, and its progress 0..1. */
  const patchAt = (t: number): { level: number; progress: number } => {
    if (sunPatchBoost === 0) return { level: 0, progress: 0 };
    const rel = (((t % lightingPeriod) - patchFirst) % lightingPeriod + lightingPeriod) % lightingPeriod;
    if (rel >= patchFrames) return { level: 0, progress: 0 };
    const s = Math.min(1, rel / patchRamp, (patchFrames - rel) / patchRamp);
    return { level: s * s * (3 - 2 * s), progress: rel / patchFrames };
  };
  const lightPatch = (img: Float32Array, t: number): void => {
    const { level, progress } = patchAt(t);
    if (level === 0) return;
    const boost = sunPatchBoost * level;
    const cx = patch.x + patch.slide * (progress - 0.5);
    const ya = Math.max(0, Math.floor((patch.y - patch.halfH) * height - patch.soft));
    const yb = Math.min(topRow, Math.ceil((patch.y + patch.halfH) * height + patch.soft));
    for (let y = ya; y < yb; y++) {
      const ny = (y + 0.5) / height;
      const sy = clamp01(((patch.halfH - Math.abs(ny - patch.y)) * height) / patch.soft + 0.5);
      if (sy === 0) continue;
      const left = cx + patch.slant * (ny - patch.y);
      const xa = Math.max(0, Math.floor((left - patch.halfW) * width - patch.soft));
      const xb = Math.min(width, Math.ceil((left + patch.halfW) * width + patch.soft));
      for (let x = xa; x < xb; x++) {
        const sx = clamp01(((patch.halfW - Math.abs((x + 0.5) / width - left)) * width) / patch.soft + 0.5);
        img[y * width + x] *= 1 + boost * sx * sy;
      }
    }
  };

  // People.
  const peopleAt = (t: number): Drawn[] => {
    const tau = t % schedulePeriod;
    const people: Drawn[] = [];
    for (const walk of walks) {
      const rel = (tau - walk.start + schedulePeriod) % schedulePeriod;
      if (rel >= walk.duration) continue;
      footPoints(walk, rel, geometry, foot);
      walk.members.forEach((member, k) => {
        const x = foot[2 * k];
        const y = foot[2 * k + 1];
        const [x0, y0, x1, y1] = personBox(geometry, x, y, member.scale);
        if (x1 > 0 && x0 < 1 && y1 > 0 && y0 < 1) people.push({ member, group: walk.group, x, y });
      });
    }
    // Back to front: farther (smaller foot y) first, ties by id for a stable order.
    people.sort((a, b) => a.y - b.y || (a.member.id < b.member.id ? -1 : 1));
    return people;
  };

  const work = new Float32Array(frameArea);
  const shade = new Float32Array(frameArea).fill(1);
  const noiseBuffer = new Float32Array(frameArea);
  const render = (t: number, people: readonly Drawn[] | undefined, stream: number, out: Float32Array): void => {
    work.set(background);
    lightPatch(work, t);
    if (people !== undefined) {
      if (shadows && people.length > 0) {
        let first = height;
        let last = 0;
        for (const p of people) {
          const [a, b] = castShadow(shade, geometry, p.x, p.y, p.member.scale, p.member.shadowLight, topRow);
          if (a < b) {
            first = Math.min(first, a);
            last = Math.max(last, b);
          }
        }
        for (let i = first * width; i < last * width; i++) {
          if (shade[i] < 1) {
            work[i] *= shade[i];
            shade[i] = 1;
          }
        }
      }
      for (const p of people) drawPerson(work, geometry, p.x, p.y, p.member.scale, p.member.look);
    }
    const gain = gainAt(t);
    if (noise > 0) random(seed, t, stream).normals(noiseBuffer, noise);
    else noiseBuffer.fill(0);
    // + 0.5 then truncation: round half up (values are ≥ 0.5 there).
    for (let i = 0; i < frameArea; i++) {
      const v = work[i] * gain + 0.5 + noiseBuffer[i];
      out[i] = v < 1 ? 0 : v >= 255 ? 255 : v | 0;
    }
  };

  const toObject = (p: Drawn): SceneObject => ({
    id: p.member.id,
    kind: SceneObjectKind.person,
    box: personBox(geometry, p.x, p.y, p.member.scale),
    anchor: [p.x, p.y],
    group: p.group,
    posture: Posture.standing,
  });

  const meanSquareScale = 1 + 0.07 ** 2 / 3; // E[s²] for s uniform in 0.93..1.07
  const scene: PlazaScene = {
    id: 'plaza',
    name: 'Town square',
    width,
    height,
    zones,
    frameRate,
    lightingPeriod,
    schedulePeriod,
    horizon,
    shadows,
    personHeightAt: (y) => geometry.heightAt(y),
    personAreaAt: (y) => {
      const u = (geometry.heightAt(y) * height) / SHAPE.tall;
      return (shapeUnitArea() * u * u * meanSquareScale) / frameArea;
    },
    sunPatchAt(t) {
      assertFrameIndex(t);
      return patchAt(t).level > 0;
    },
    emptyFrameAt(t, out) {
      assertFrameIndex(t);
      const frame = outputFrame(width, height, out);
      render(t, undefined, EMPTY_STREAM, frame.data);
      return frame;
    },
    frameAt(t, out) {
      assertFrameIndex(t);
      const frame = outputFrame(width, height, out);
      const people = peopleAt(t);
      render(t, people, PEOPLE_STREAM, frame.data);
      const truth: SceneTruth = {};
      for (const zone of zones) {
        let count = 0;
        for (const p of people) if (pointInPolygon(p.x, p.y, zone.polygon)) count++;
        truth[zone.id] = { count };
      }
      return { frame, truth };
    },
    objectsAt(t) {
      assertFrameIndex(t);
      return peopleAt(t).map(toObject);
    },
  };
  return scene;
}

function clamp01(v: number): number {
  return v <= 0 ? 0 : v >= 1 ? 1 : v;
}
