import type { Blob } from '../vision/labelComponents.ts';
import { pointInPolygon } from '../domain/pointInPolygon.ts';
import type { PreparedZone } from '../vision/prepareZones.ts';
import { peopleInBlob, type FrameTally, type ZoneTally } from '../vision/tallyZones.ts';

export interface FollowBlobsOptions {
  /** Frames a new blob must be seen in a row before it counts (≥ 1, default 2: a one-frame flicker never counts). */
  confirmFrames?: number;
  /** Frames a counted blob that vanished keeps counting where it was heading (≥ 0, default 1: a one-frame drop-out is bridged). */
  holdFrames?: number;
  /** Counts of a followed blob remembered for its smoothed count (≥ 1, default 5; the median of them is used). */
  historyFrames?: number;
  /** Search margin around a blob's predicted box, as a share of its width (≥ 0, default 0.5), at least 3 pixels. */
  reach?: number;
  /**
   * A blob running into another counts as people of its own only when it covered at least this
   * many person areas (default 0.6): two parts of one person (head and legs split by clothing
   * close to the floor's grey) joining again are no merge of two people.
   */
  mergeFraction?: number;
  /**
   * A blob running into another counts as people of its own only after it was followed on its
   * own for this many frames (≥ 1, default 5), so that a part of a person that comes and goes
   * (an arm, a bag) is no merge.
   */
  mergeAfterFrames?: number;
  /**
   * People held in a merged blob are at most its area in person areas ÷ this (> 0, default 0.6):
   * people walking together hide part of each other, but not most.
   */
  mergeVisible?: number;
}

/** One followed blob: an anonymous, short-lived track (numbers only, never pixels or identity). */
interface Track {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  /** Motion of the box centre per frame, pixels. */
  vx: number;
  vy: number;
  /** Frames seen in a row. */
  seen: number;
  /** Frames missed since last seen. */
  missed: number;
  /** The count it stands for now. */
  people: number;
  /** Recent area-rule counts, newest last. */
  history: number[];
  /** People known to be in the blob since others ran into it (0: none); lowered when some split off. */
  floor: number;
  /** Area of the blob in person areas (unrounded), last seen. */
  fraction: number;
  /** Foot point and centroid, for the zone it is in. */
  footX: number;
  footY: number;
  cx: number;
  cy: number;
}

/** Follows a sequence's blobs; `tally` replaces a frame's per-zone people counts with followed ones. */
export interface BlobFollower {
  /** The zones it was made for. */
  readonly zones: readonly PreparedZone[];
  /**
   * Takes one frame's blobs (in frame order) and the frame's plain tally, and returns the tally
   * with the rooms' counts (and the total) from the followed blobs; shelves are left as they are.
   */
  tally(blobs: readonly Blob[], plain: FrameTally): FrameTally;
  /** Tracks held now (for tests and metrics). */
  readonly tracks: number;
  /** Forgets every track (e.g. after the view changed). */
  reset(): void;
}

/**
 * Uses time: frames of a video or a live camera come in order, so a blob in one frame is
 * usually the same people as the overlapping blob in the frame before. Each blob is followed by
 * plain assignment on box overlap (greedy on intersection over union, after moving each track's
 * box by its last motion and widening it by `reach`), which gives:
 *
 * - **merges**: when two or more followed blobs run into one (people walking past each other,
 *   a group closing up), the merged blob counts at least as many people as they did, until it
 *   splits again;
 * - **smoothing**: a followed blob's count is the median of its last `historyFrames` counts by
 *   the area rule, so one frame of a shadow or a gap does not turn one person into two or none;
 * - **flickers**: a new blob counts once it has been seen `confirmFrames` frames in a row (in
 *   the first frame at once: there is nothing before to tell a flicker by), and a
 *   counted blob that vanishes keeps its count for `holdFrames` frames; real arrivals and
 *   departures show with at most that lag.
 *
 * This is the "simple assignment" form of multi-target tracking (greedy overlap matching, as in
 * many background-subtraction trackers; common practice); no appearance, no identity. Tracks
 * live in memory for as long as the blob is seen (plus `holdFrames`) and are never stored or sent.
 *
 * Example: one person walking, their blob vanishing in frame 5 only, counts 0, 1, 1, 1, 1, 1, …
 * (confirmed in frame 2, held through frame 5); two people meeting into one blob of 1.3 person
 * areas count 2 while together.
 */
export function createBlobFollower(zones: readonly PreparedZone[], size: { width: number; height: number }, options: FollowBlobsOptions = {}): BlobFollower {
  const { confirmFrames = 2, holdFrames = 1, historyFrames = 5, reach = 0.5, mergeFraction = 0.6, mergeAfterFrames = 5, mergeVisible = 0.6 } = options;
  if (!(Number.isInteger(confirmFrames) && confirmFrames >= 1)) throw new RangeError(`confirmFrames must be a whole number ≥ 1, got ${confirmFrames}`);
  if (!(Number.isInteger(holdFrames) && holdFrames >= 0)) throw new RangeError(`holdFrames must be a whole number ≥ 0, got ${holdFrames}`);
  if (!(Number.isInteger(historyFrames) && historyFrames >= 1)) throw new RangeError(`historyFrames must be a whole number ≥ 1, got ${historyFrames}`);
  if (!(reach >= 0)) throw new RangeError(`reach must be ≥ 0, got ${reach}`);
  const { width, height } = size;
  const rooms = zones.filter((z) => z.kind === 'room');
  let tracks: Track[] = [];
  // Blobs of the first frame have nothing to be followed from: they count at once.
  let first = true;

  /** The room zones that count this blob (anchor inside, big enough), the people it is by the area rule, and its area in person areas. */
  function claim(blob: Blob): { zones: PreparedZone[]; people: number; fraction: number } {
    const claimed: PreparedZone[] = [];
    let people = 0;
    let fraction = 1;
    for (const zone of rooms) {
      if (blob.area < (zone.minBlobPixelsAt ? zone.minBlobPixelsAt(blob.footY) : zone.minBlobPixels)) continue;
      const [ax, ay] = zone.anchor === 'foot' ? [blob.footX, blob.footY] : [blob.cx, blob.cy];
      if (!pointInPolygon((ax + 0.5) / width, (ay + 0.5) / height, zone.polygon)) continue;
      if (claimed.length === 0) {
        const person = zone.personPixelsAt ? zone.personPixelsAt(blob.footY) : zone.personPixels;
        people = peopleInBlob(blob.area, person, zone.visibleShare);
        fraction = person > 0 ? blob.area / person : 1;
      }
      claimed.push(zone);
    }
    return { zones: claimed, people, fraction };
  }

  return {
    zones,
    get tracks() {
      return tracks.length;
    },
    reset() {
      tracks = [];
      first = true;
    },
    tally(blobs, plain) {
      if (rooms.length === 0) return plain;
      const claims = blobs.map(claim);
      const candidates = blobs.map((_, b) => b).filter((b) => claims[b].zones.length > 0);
      // Overlaps of predicted, widened track boxes with the blobs' boxes.
      const pairs: { t: number; b: number; iou: number }[] = [];
      tracks.forEach((track, t) => {
        const w = track.x1 - track.x0 + 1;
        const grow = Math.max(3, reach * w);
        const px0 = track.x0 + track.vx - grow;
        const px1 = track.x1 + track.vx + grow;
        const py0 = track.y0 + track.vy - grow;
        const py1 = track.y1 + track.vy + grow;
        for (const b of candidates) {
          const blob = blobs[b];
          const ix = Math.min(px1, blob.x1) - Math.max(px0, blob.x0);
          const iy = Math.min(py1, blob.y1) - Math.max(py0, blob.y0);
          if (ix <= 0 || iy <= 0) continue;
          const inter = ix * iy;
          const union = (px1 - px0) * (py1 - py0) + (blob.x1 - blob.x0 + 1) * (blob.y1 - blob.y0 + 1) - inter;
          pairs.push({ t, b, iou: inter / union });
        }
      });
      pairs.sort((p, q) => q.iou - p.iou);
      const blobTrack = new Int32Array(blobs.length).fill(-1);
      const trackBlob = new Int32Array(tracks.length).fill(-1);
      for (const { t, b } of pairs) {
        if (blobTrack[b] >= 0 || trackBlob[t] >= 0) continue;
        blobTrack[b] = t;
        trackBlob[t] = b;
      }
      // Tracks left over that overlap a matched blob ran into it (a merge) when they were
      // counted and large enough to be people of their own.
      const mergedInto = new Int32Array(tracks.length).fill(-1);
      for (const { t, b } of pairs) {
        if (trackBlob[t] >= 0 || mergedInto[t] >= 0 || blobTrack[b] < 0) continue;
        const track = tracks[t];
        if (track.seen >= Math.max(confirmFrames, mergeAfterFrames) && track.fraction >= mergeFraction) mergedInto[t] = b;
      }
      // Blobs left over that overlap a followed one split off it: their people leave its floor.
      const splitFrom = new Int32Array(blobs.length).fill(-1);
      const splitPeople = new Float64Array(tracks.length);
      for (const { t, b } of pairs) {
        if (blobTrack[b] >= 0 || splitFrom[b] >= 0) continue;
        splitFrom[b] = t;
        splitPeople[t] += claims[b].people;
      }
      const next: Track[] = [];
      const counted: { track: Track; zones: PreparedZone[] }[] = [];
      for (const b of candidates) {
        const blob = blobs[b];
        const { people: raw, fraction } = claims[b];
        const t = blobTrack[b];
        const old = t >= 0 ? tracks[t] : undefined;
        const history = old ? [...old.history, raw].slice(-historyFrames) : [raw];
        let floor = old ? Math.max(0, old.floor - splitPeople[t]) : 0;
        let joined = 0;
        tracks.forEach((other, o) => {
          if (mergedInto[o] === b) joined += other.people;
        });
        if (joined > 0 && old) floor = Math.max(floor, old.people + joined);
        floor = Math.min(floor, Math.max(1, Math.round(fraction / mergeVisible)));
        const people = Math.max(median(history), floor);
        const ccx = (blob.x0 + blob.x1) / 2;
        const ccy = (blob.y0 + blob.y1) / 2;
        const parent = splitFrom[b] >= 0 ? tracks[splitFrom[b]] : undefined;
        const track: Track = {
          x0: blob.x0,
          y0: blob.y0,
          x1: blob.x1,
          y1: blob.y1,
          vx: old ? 0.5 * old.vx + 0.5 * (ccx - (old.x0 + old.x1) / 2) : 0,
          vy: old ? 0.5 * old.vy + 0.5 * (ccy - (old.y0 + old.y1) / 2) : 0,
          // A blob split off a counted one is no flicker: it counts at once.
          seen: old ? old.seen + 1 : first || (parent !== undefined && parent.seen >= confirmFrames) ? confirmFrames : 1,
          missed: 0,
          people,
          history,
          floor,
          fraction,
          footX: blob.footX,
          footY: blob.footY,
          cx: blob.cx,
          cy: blob.cy,
        };
        next.push(track);
        if (track.seen >= confirmFrames) counted.push({ track, zones: claims[b].zones });
      }
      // Counted tracks that vanished (not merged) are held for a few frames where they were heading.
      tracks.forEach((track, t) => {
        if (trackBlob[t] >= 0 || mergedInto[t] >= 0) return;
        // Run into a blob that another track followed (too small to be people of its own): gone.
        if (pairs.some((p) => p.t === t)) return;
        if (track.seen < confirmFrames || track.missed >= holdFrames) return;
        const held: Track = {
          ...track,
          x0: track.x0 + track.vx,
          x1: track.x1 + track.vx,
          y0: track.y0 + track.vy,
          y1: track.y1 + track.vy,
          footX: track.footX + track.vx,
          footY: track.footY + track.vy,
          cx: track.cx + track.vx,
          cy: track.cy + track.vy,
          missed: track.missed + 1,
        };
        next.push(held);
        const zonesHere = rooms.filter((zone) => {
          const [ax, ay] = zone.anchor === 'foot' ? [held.footX, held.footY] : [held.cx, held.cy];
          return pointInPolygon((ax + 0.5) / width, (ay + 0.5) / height, zone.polygon);
        });
        if (zonesHere.length > 0) counted.push({ track: held, zones: zonesHere });
      });
      tracks = next;
      first = false;

      const result: Record<string, ZoneTally> = { ...plain.zones };
      for (const zone of rooms) result[zone.id] = { ...plain.zones[zone.id], count: 0, blobs: 0 };
      let total = plain.total;
      // The plain total counts each room blob once; replace the rooms' part by the followed one.
      for (const b of candidates) total -= claims[b].people;
      for (const { track, zones: inZones } of counted) {
        total += track.people;
        for (const zone of inZones) {
          const z = result[zone.id];
          result[zone.id] = { ...z, count: z.count + track.people, blobs: z.blobs + 1 };
        }
      }
      return { total: Math.max(0, total), zones: result };
    },
  };
}

/** Median of small whole numbers (rounding a tie between two middles up). */
function median(values: readonly number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const h = sorted.length >> 1;
  return sorted.length % 2 === 1 ? sorted[h] : Math.ceil((sorted[h - 1] + sorted[h]) / 2);
}
