import type { AnchorPoint, Zone, ZoneKind } from '../domain/zone.ts';
import { fitPersonArea } from './fitPersonArea.ts';
import { packMask, type BitMask } from './bitMask.ts';
import { rasterizeZone } from '../domain/rasterizeZone.ts';

/**
 * Share of each further person's area that stays visible in a merged blob of people, default for
 * room zones with a perspective line (people at different depths): people walking together hide part of each other, but not most (the same share
 * createBlobFollower's `mergeVisible` allows). Measured on our synthetic plaza (300 frames,
 * groups of 2–3 walking side by side or one partly behind another, blobs matched to the drawn
 * people whose foot points they hold): single people cover 0.89–1.11 of the median single blob
 * (quartiles; 5th–95th percentile 0.65–1.25), pairs 1.43–1.73 (median 1.64) and threesomes
 * 2.2 at the median: about 1 + 0.6 per further person.
 */
export const MERGED_VISIBLE_SHARE = 0.6;

/** A zone turned into pixels and pixel counts at one working size, ready for tallying. */
export interface PreparedZone {
  readonly id: string;
  readonly kind: ZoneKind;
  readonly polygon: Zone['polygon'];
  readonly anchor: AnchorPoint;
  /** Indices (y × width + x) of the pixels whose centres lie in the polygon. */
  readonly pixels: Uint32Array;
  /** The same pixels as a bit mask (padding bits 0), for tallying a packed foreground mask. */
  readonly bits: BitMask;
  /** Words of `bits` from firstWord to lastWord − 1 hold every one of its pixels (the rows it spans). */
  readonly firstWord: number;
  readonly lastWord: number;
  /** Foreground threshold in noise units. */
  readonly threshold: number;
  /** Blobs with fewer pixels than this are dropped (strictly smaller). */
  readonly minBlobPixels: number;
  /** Pixels of one person (rooms) or one item (shelves); 0 = count each blob as one. */
  readonly personPixels: number;
  /**
   * Share of one person's area each further person adds to a merged blob (peopleInBlob): the
   * option `visibleShare` for rooms with a perspective line, 1 (plain rounding) for rooms with a
   * single person area and for shelves (items side by side hide nothing).
   */
  readonly visibleShare: number;
  /** With perspective: pixels of one person whose feet are on pixel row `footY`. */
  readonly personPixelsAt?: (footY: number) => number;
  /**
   * With perspective and no `minBlobArea` of the zone's own: the smallest blob kept with its feet
   * on pixel row `footY` (strictly smaller ones are dropped); `minBlobPixels` is then the smallest
   * of these over the zone.
   */
  readonly minBlobPixelsAt?: (footY: number) => number;
}

export interface PrepareZonesOptions {
  /** Threshold for zones that set none, noise units; default 3. */
  threshold?: number;
  /** Person area for room zones that set none, fraction of the frame area; default 0.008. */
  personArea?: number;
  /** Smallest blob for room zones that set none, as a share of their person area; default 0.25. */
  minBlobShare?: number;
  /** Smallest blob for shelf zones that set none, fraction of the frame area; default 0.0005. */
  shelfMinBlobArea?: number;
  /**
   * Perspective guard: the largest expected person in a zone covers at most this many times the
   * area of the smallest (≥ 1, default 10); expected areas below the largest ÷ this are raised to
   * it, so that a small blob far away (a patch of light on a far wall) cannot stand for many people.
   */
  maxPerspectiveRatio?: number;
  /**
   * Perspective guard: how far beyond the rows of its reference people the perspective line is
   * followed, normalised rows (≥ 0, default 0.1); further up or down, the expected area stays
   * the one at that limit.
   */
  perspectiveReach?: number;
  /**
   * Rooms with a perspective line: share of one person's area that each further person in a
   * merged blob adds (the rest hidden by the others), in (0, 1]; default MERGED_VISIBLE_SHARE
   * (0.6). 1 is plain rounding of the blob's area in person areas, which rooms with a single
   * person area and shelves always use.
   */
  visibleShare?: number;
}

/**
 * Rasterises zones at a working size and resolves their defaults. Areas given as fractions of
 * the frame become pixel counts here, so the same zones file works at any working resolution.
 */
export function prepareZones(
  zones: readonly Zone[],
  size: { width: number; height: number },
  options: PrepareZonesOptions = {},
): PreparedZone[] {
  const { threshold = 3, personArea = 0.008, minBlobShare = 0.25, shelfMinBlobArea = 0.0005, maxPerspectiveRatio = 10, perspectiveReach = 0.1, visibleShare = MERGED_VISIBLE_SHARE } = options;
  if (!(maxPerspectiveRatio >= 1)) throw new RangeError(`maxPerspectiveRatio must be ≥ 1, got ${maxPerspectiveRatio}`);
  if (!(visibleShare > 0 && visibleShare <= 1)) throw new RangeError(`visibleShare must be in (0, 1], got ${visibleShare}`);
  if (!(perspectiveReach >= 0)) throw new RangeError(`perspectiveReach must be ≥ 0, got ${perspectiveReach}`);
  const frameArea = size.width * size.height;
  const mask = rasterizeZone([[0, 0], [1, 0], [1, 1], [0, 1]], size);
  return zones.map((zone) => {
    rasterizeZone(zone.polygon, size, { out: mask });
    let count = 0;
    for (let i = 0; i < frameArea; i++) count += mask.data[i];
    const pixels = new Uint32Array(count);
    for (let i = 0, p = 0; i < frameArea; i++) if (mask.data[i]) pixels[p++] = i;
    const bits = packMask(mask);
    const rowOf = (p: number) => Math.floor(p / size.width);
    const firstWord = count === 0 ? 0 : rowOf(pixels[0]) * bits.words;
    const lastWord = count === 0 ? 0 : (rowOf(pixels[count - 1]) + 1) * bits.words;
    const room = zone.kind === 'room';
    const person = zone.personArea ?? (room ? personArea : undefined);
    const personPixels = person === undefined ? 0 : person * frameArea;
    const areaAt = zone.perspective ? guardedAreaAt(zone.perspective, zone.polygon, maxPerspectiveRatio, perspectiveReach) : undefined;
    const personPixelsAt = areaAt && ((footY: number) => areaAt((footY + 0.5) / size.height) * frameArea);
    // With perspective, the smallest blob kept follows the expected person at the blob's row.
    const smallestPerson = areaAt ? Math.min(...zone.polygon.map(([, y]) => areaAt(y))) : undefined;
    const minBlob = zone.minBlobArea ?? (room ? (smallestPerson ?? person ?? personArea) * minBlobShare : shelfMinBlobArea);
    const minBlobPixelsAt = personPixelsAt && zone.minBlobArea === undefined && room ? (footY: number) => personPixelsAt(footY) * minBlobShare : undefined;
    return {
      id: zone.id,
      kind: zone.kind,
      polygon: zone.polygon,
      anchor: zone.anchor ?? (room ? 'foot' : 'centroid'),
      pixels,
      bits,
      firstWord,
      lastWord,
      threshold: zone.threshold ?? threshold,
      minBlobPixels: minBlob * frameArea,
      personPixels,
      // Only where people stand at different depths (a perspective line): seen from above or at
      // one distance, people side by side hide little of each other, and a walker in a zone of
      // seated people (a larger person area than theirs) must stay one.
      visibleShare: room && personPixelsAt ? visibleShare : 1,
      ...(personPixelsAt && { personPixelsAt }),
      ...(minBlobPixelsAt && { minBlobPixelsAt }),
    };
  });
}

/**
 * The expected person area at a normalised foot row (fitPersonArea over the references) with
 * two guards against amplifying small far blobs: the line is followed only `reach` beyond the
 * references' rows (further out it stays at the limit's value), and no expected area in the zone
 * is below the zone's largest ÷ `maxRatio`.
 *
 * Example: references (y 0.5, area 0.004) and (y 1, area 0.016), a zone spanning rows 0..1,
 * ratio 10 and reach 0.1: at row 0.2 the line alone gives 0.00064; the reach holds it at row
 * 0.4 (0.00256), above the floor 0.0016.
 */
function guardedAreaAt(
  references: NonNullable<Zone['perspective']>,
  polygon: Zone['polygon'],
  maxRatio: number,
  reach: number,
): (y: number) => number {
  const line = fitPersonArea(references);
  const rows = references.map((r) => r.y);
  const low = Math.min(...rows) - reach;
  const high = Math.max(...rows) + reach;
  const within = (y: number) => line.areaAt(Math.min(high, Math.max(low, y)));
  const largest = Math.max(...polygon.map(([, y]) => within(y)));
  const floor = largest / maxRatio;
  return (y) => Math.max(floor, within(y));
}
