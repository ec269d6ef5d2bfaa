/**
 * Types shared by the synthetic scenes: invented rooms with exact ground truth per zone, used to
 * learn the empty-scene model, to check counting accuracy and to run the demo live. They contain
 * no real people: only grey ellipses and boxes drawn from a seeded schedule.
 */
import type { GreyFrame } from '../../domain/frame.ts';
import type { NormalisedPoint, Zone } from '../../domain/zone.ts';

/** The truth of one zone in one frame. */
export interface ZoneTruth {
  /** People (rooms) whose foot point, or items (shelves) whose centroid, lies in the zone polygon. */
  readonly count: number;
  /** Shelves only: share of the zone's pixels covered by items, 0..1 inclusive. */
  readonly fill?: number;
}

/** Truth of a frame: one entry per zone id. */
export type SceneTruth = Record<string, ZoneTruth>;

/** What a drawn object is. */
export const SceneObjectKind = { person: 'person', item: 'item' } as const;
export type SceneObjectKind = (typeof SceneObjectKind)[keyof typeof SceneObjectKind];

/** How a person is drawn. */
export const Posture = { standing: 'standing', seated: 'seated' } as const;
export type Posture = (typeof Posture)[keyof typeof Posture];

/** One person or item as drawn in a frame: the geometry the truth is computed from. */
export interface SceneObject {
  /** Stable across the frames the object is in (`p12`, `p12b` for a partner, `shelf-top:3:7`). */
  readonly id: string;
  readonly kind: SceneObjectKind;
  /**
   * Bounding box [x0, y0, x1, y1] of the drawn shape in normalised coordinates (x0 ≤ x < x1,
   * y0 ≤ y < y1); people include their soft edge only up to the half-coverage contour.
   */
  readonly box: readonly [number, number, number, number];
  /** The point that decides the zone: foot point (bottom centre of the box) for people, centroid for items. */
  readonly anchor: NormalisedPoint;
  /** People only: the group id shared by people walking together (a pair). */
  readonly group?: string;
  /** People only. */
  readonly posture?: Posture;
}

/** A local light that switches between two levels. */
export interface SceneLamp {
  /** Centre of the pool of light, normalised. */
  readonly centre: NormalisedPoint;
  /** Gaussian radius (standard deviation) of the pool, as a fraction of the frame height. */
  readonly radius: number;
  /** Extra relative brightness at the centre while on (0.3 = 30 % brighter). */
  readonly boost: number;
  /** Frame indices in [0, lightingPeriod) at which the lamp switches (repeating every period). */
  readonly switchFrames: readonly number[];
  /** Whether the lamp is on in frame t. */
  onAt(t: number): boolean;
}

/**
 * A deterministic, random-access synthetic scene.
 *
 * Frame t (a whole number ≥ 0) is computed directly: every call with the same (seed, t) returns
 * the same pixels, whatever was rendered before. Per-frame randomness (sensor noise) comes from a
 * hash of (seed, t); people and items follow a schedule generated once from the seed.
 */
export interface SyntheticScene {
  readonly id: string;
  readonly name: string;
  readonly width: number;
  readonly height: number;
  /** Zone ids, kind, polygon, personArea (one drawn person or item, fraction of frame area), minBlobArea. */
  readonly zones: readonly Zone[];
  /** Frames per second of scene time. */
  readonly frameRate: number;
  /**
   * Frames after which the lighting process repeats. A model learned on empty frames spread over
   * [0, lightingPeriod) (e.g. every 10th) spans all of the scene's lighting; a short run of
   * consecutive frames may miss a lamp state.
   */
  readonly lightingPeriod: number;
  /** The switching lamp, if the scene has one. */
  readonly lamp?: SceneLamp;
  /**
   * An empty-scene frame (nobody in it) at frame index t: same lighting and drift as frameAt,
   * sensor noise drawn independently of frameAt(t)'s. Writes into `out` when given (must fit).
   */
  emptyFrameAt(t: number, out?: GreyFrame): GreyFrame;
  /** Frame t with people/items, and the truth per zone id. Writes into `out` when given (must fit). */
  frameAt(t: number, out?: GreyFrame): { frame: GreyFrame; truth: SceneTruth };
  /** The people/items drawn in frame t, in drawing order (back to front). */
  objectsAt(t: number): readonly SceneObject[];
}

/** Throws unless t is a whole number ≥ 0 (a frame index). */
export function assertFrameIndex(t: number, what = 't'): void {
  if (!(Number.isSafeInteger(t) && t >= 0)) throw new RangeError(`${what} must be a whole number ≥ 0, got ${String(t)}`);
}

/** `out` when given and of the scene's size, else a new frame; throws when `out` does not fit. */
export function outputFrame(width: number, height: number, out?: GreyFrame): GreyFrame {
  if (out === undefined) return { width, height, data: new Float32Array(width * height) };
  if (out.width !== width || out.height !== height || out.data.length !== width * height) {
    throw new RangeError(`out frame is ${out.width}×${out.height}, expected ${width}×${height}`);
  }
  return out;
}
