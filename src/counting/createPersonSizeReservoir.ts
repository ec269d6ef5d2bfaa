import type { Blob } from '../vision/labelComponents.ts';
import { learnPersonArea, type LearnPersonAreaOptions, type PersonObservation } from '../vision/learnPersonArea.ts';
import { pointInPolygon } from '../domain/pointInPolygon.ts';
import type { PreparedZone } from '../vision/prepareZones.ts';

/** One blob kept for learning: a person standing alone (numbers only, never pixels). */
export interface PersonSample extends PersonObservation {
  /** Bounding-box height ÷ width, each as a fraction of the frame's height and width. */
  readonly aspect: number;
}

/** Where learning the person size stands. */
export const PersonSizeState = {
  /** A fit is available. */
  ready: 'ready',
  /** Too few people seen alone yet (or too few agree on one size). */
  tooFew: 'too-few',
  /** The people seen alone stood in too narrow a band of rows. */
  rowsNotSpread: 'rows-not-spread',
} as const;
export type PersonSizeState = (typeof PersonSizeState)[keyof typeof PersonSizeState];

/** The person size learned from a camera so far: plain numbers, ready to send as JSON. */
export interface PersonSizeSuggestion {
  readonly state: PersonSizeState;
  /** The state in words, with the numbers. */
  readonly message: string;
  /** Observations kept now (the reservoir is bounded). */
  readonly observations: number;
  /** Blobs taken for a person alone since the camera started or learned its empty scene again, kept or not. */
  readonly seen: number;
  /** Kept observations that agree with the fit (0 without one). */
  readonly supporting: number;
  /** ready: √area = intercept + slope · y, area as a fraction of the frame, y the normalised foot row. */
  readonly intercept?: number;
  readonly slope?: number;
  /** ready: 10th and 90th percentile of the supporting foot rows (normalised): where the fit is well supported. */
  readonly rows?: readonly [number, number];
  /** ready: median box height ÷ width of the supporting blobs, each as a fraction of the frame's height and width. */
  readonly aspect?: number;
}

/** What the reservoir reads of one counted frame (a FrameCount has it). */
export interface CountedFrame {
  readonly blobs: readonly Blob[];
  readonly zones: Readonly<Record<string, { readonly count: number }>>;
}

export interface PersonSizeReservoirOptions {
  /** Bands of foot rows the reservoir is split into, so that no distance crowds out the others; whole number ≥ 1, default 16. */
  bands?: number;
  /** Observations kept per band (inclusive); whole number ≥ 1, default 32 (512 in all). */
  perBand?: number;
  /** Frames in a row, the current one included, over which a zone's count must not change; whole number ≥ 1, default 5. */
  stableFrames?: number;
  /** Blobs are taken from every n-th frame only (consecutive frames show the same people); whole number ≥ 1, default 5. */
  every?: number;
  /** Free margin around a blob's bounding box that no other blob's box may enter, pixels; ≥ 0, default 2. */
  margin?: number;
  /** Plausible bounding-box height ÷ width of a person in pixels, both bounds inclusive; default [1.2, 5]. */
  aspect?: readonly [number, number];
  /** The fit (a few milliseconds for a full reservoir) is redone after this many new observations (inclusive); whole number ≥ 1, default 50. */
  refitEvery?: number;
  /** Uniform random numbers in [0, 1) for the reservoir's replacements; default Math.random. */
  random?: () => number;
  /** Options of the robust fit (learnPersonArea). */
  learn?: LearnPersonAreaOptions;
}

/** A camera's bounded store of person sizes and the person area learned from it. */
export interface PersonSizeReservoir {
  /** Looks at one counted frame and keeps the blobs that look like one person alone in a steady scene. */
  observe(frame: CountedFrame, zones: readonly PreparedZone[]): void;
  /** The observations kept now (a copy). */
  observations(): PersonSample[];
  /** The person area learned so far (refitted after every `refitEvery` new observations). */
  suggestion(): PersonSizeSuggestion;
  /** Forgets every observation (when the view may have changed, e.g. after learning the empty scene again). */
  clear(): void;
}

/**
 * Gathers, per camera, the sizes of blobs that are most likely one person alone, for
 * {@link learnPersonArea}. A blob is kept when
 * - a room zone claims it (its anchor point in the polygon, not smaller than the zone's minimum)
 *   and the count of every room zone claiming it has stayed the same for `stableFrames` frames
 *   (people are not just entering, leaving or merging);
 * - no other blob's bounding box comes within `margin` pixels of its own (not touching others);
 * - its bounding box touches no frame edge (not cut off) and has a person's proportions
 *   (height ÷ width in `aspect`).
 * Some kept blobs are still two people close together; the robust fit sets those aside.
 *
 * Memory stays bounded: the foot rows are split into `bands`, each keeping at most `perBand`
 * observations as a uniform sample of all it was offered, by reservoir sampling (J. S. Vitter,
 * "Random sampling with a reservoir", ACM TOMS 11(1), 1985, Algorithm R). Only numbers are kept
 * (foot row, area, proportions), never pixels.
 *
 * Example: 500 frames of one person walking alone from row 0.4 to 0.95 keep 99 observations
 * (every 5th frame, once the count was steady for 5 frames) and give state `ready` with the
 * person's size along the way.
 */
export function createPersonSizeReservoir(size: { width: number; height: number }, options: PersonSizeReservoirOptions = {}): PersonSizeReservoir {
  const { bands = 16, perBand = 32, stableFrames = 5, every = 5, margin = 2, aspect = [1.2, 5], refitEvery = 50, random = Math.random, learn = {} } = options;
  const whole = (v: number, name: string) => {
    if (!(Number.isInteger(v) && v >= 1)) throw new RangeError(`options.${name} must be a whole number ≥ 1, got ${v}`);
  };
  whole(bands, 'bands');
  whole(perBand, 'perBand');
  whole(stableFrames, 'stableFrames');
  whole(every, 'every');
  whole(refitEvery, 'refitEvery');
  if (!(margin >= 0)) throw new RangeError(`options.margin must be ≥ 0 pixels, got ${margin}`);
  if (!(aspect[0] > 0 && aspect[0] <= aspect[1])) throw new RangeError(`options.aspect must be [low, high] with 0 < low ≤ high, got [${aspect.join(', ')}]`);
  const { width, height } = size;
  const frameArea = width * height;
  const kept: PersonSample[][] = Array.from({ length: bands }, () => []);
  const offered = new Float64Array(bands);
  const history = new Map<string, number[]>();
  let frames = 0;
  let seen = 0;
  let sinceFit = Infinity;
  let cached: PersonSizeSuggestion | undefined;

  function stable(zoneId: string): boolean {
    const h = history.get(zoneId);
    return h !== undefined && h.length === stableFrames && h.every((c) => c === h[0]);
  }

  function isolated(blob: Blob, blobs: readonly Blob[]): boolean {
    for (const other of blobs) {
      if (other === blob) continue;
      if (other.x0 <= blob.x1 + margin && other.x1 >= blob.x0 - margin && other.y0 <= blob.y1 + margin && other.y1 >= blob.y0 - margin) return false;
    }
    return true;
  }

  function offer(sample: PersonSample): void {
    const band = Math.min(bands - 1, Math.floor(sample.y * bands));
    const list = kept[band];
    offered[band]++;
    seen++;
    sinceFit++;
    if (list.length < perBand) list.push(sample);
    else {
      const j = Math.floor(random() * offered[band]);
      if (j < perBand) list[j] = sample;
    }
  }

  function fit(): PersonSizeSuggestion {
    const all = kept.flat();
    const result = learnPersonArea(all, learn);
    if (!result.ok) {
      return { state: result.reason === 'too-few' ? PersonSizeState.tooFew : PersonSizeState.rowsNotSpread, message: result.message, observations: all.length, seen, supporting: result.supporting };
    }
    const aspects = all.filter((_, i) => result.inliers[i]).map((s) => s.aspect).sort((a, b) => a - b);
    const h = aspects.length >> 1;
    const medianAspect = aspects.length % 2 === 1 ? aspects[h] : (aspects[h - 1] + aspects[h]) / 2;
    return {
      state: PersonSizeState.ready,
      message: `learned from ${result.supporting} of the ${all.length} people seen alone that are kept`,
      observations: all.length,
      seen,
      supporting: result.supporting,
      intercept: result.intercept,
      slope: result.slope,
      rows: result.rows,
      aspect: medianAspect,
    };
  }

  return {
    observe(frame, zones) {
      const rooms = zones.filter((z) => z.kind === 'room');
      for (const zone of rooms) {
        const counts = history.get(zone.id) ?? [];
        counts.push(frame.zones[zone.id]?.count ?? 0);
        if (counts.length > stableFrames) counts.shift();
        history.set(zone.id, counts);
      }
      if (history.size > rooms.length) for (const id of history.keys()) if (!rooms.some((z) => z.id === id)) history.delete(id);
      if (frames++ % every !== 0) return;
      for (const blob of frame.blobs) {
        if (blob.x0 <= 0 || blob.y0 <= 0 || blob.x1 >= width - 1 || blob.y1 >= height - 1) continue;
        const w = blob.x1 - blob.x0 + 1;
        const h = blob.y1 - blob.y0 + 1;
        if (!(h / w >= aspect[0] && h / w <= aspect[1])) continue;
        let claimed = false;
        let steady = true;
        for (const zone of rooms) {
          if (blob.area < (zone.minBlobPixelsAt ? zone.minBlobPixelsAt(blob.footY) : zone.minBlobPixels)) continue;
          const [ax, ay] = zone.anchor === 'foot' ? [blob.footX, blob.footY] : [blob.cx, blob.cy];
          if (!pointInPolygon((ax + 0.5) / width, (ay + 0.5) / height, zone.polygon)) continue;
          claimed = true;
          if (!stable(zone.id) || (frame.zones[zone.id]?.count ?? 0) < 1) steady = false;
        }
        if (!claimed || !steady || !isolated(blob, frame.blobs)) continue;
        offer({ y: (blob.footY + 0.5) / height, area: blob.area / frameArea, aspect: (h / height) / (w / width) });
      }
    },
    observations: () => kept.flat().map((s) => ({ ...s })),
    suggestion() {
      if (!cached || sinceFit >= refitEvery) {
        cached = fit();
        sinceFit = 0;
      }
      return cached;
    },
    clear() {
      for (const list of kept) list.length = 0;
      offered.fill(0);
      history.clear();
      frames = 0;
      seen = 0;
      sinceFit = Infinity;
      cached = undefined;
    },
  };
}
