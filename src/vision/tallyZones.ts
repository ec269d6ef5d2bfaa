import type { Mask } from '../domain/frame.ts';
import { popcount32, type BitMask } from './bitMask.ts';
import type { Blob } from './labelComponents.ts';
import { pointInPolygon } from '../domain/pointInPolygon.ts';
import type { PreparedZone } from './prepareZones.ts';

/** What one zone holds in one frame. */
export interface ZoneTally {
  /** People (rooms) or items (shelves) in the zone. */
  readonly count: number;
  /** Share of the zone's pixels that are foreground, 0..1. */
  readonly fill: number;
  /** Blobs anchored in the zone and large enough to count. */
  readonly blobs: number;
}

export interface FrameTally {
  /** People or items over all zones, each blob counted once (by the first zone that claims it). */
  readonly total: number;
  readonly zones: Record<string, ZoneTally>;
}

/**
 * How many people one blob stands for, from its area in person areas a = area / personPixels:
 * the first person covers one person area, each further one only `visibleShare` of one (the
 * rest hidden behind the others), so n people cover about 1 + (n − 1) · visibleShare and the
 * count is the nearest such n, halves up: max(1, 1 + ⌊(a − 1) / visibleShare + ½⌋).
 *
 * With visibleShare 1 (nothing hidden: items on a shelf) this is plain rounding of a, halves up:
 * 1.4 areas are one, 1.5 are two. With MERGED_VISIBLE_SHARE (prepareZones), 0.6, for rooms with a perspective line, the steps lie at 1.3, 1.9, 2.5, … areas:
 * a single person rarely covers more than 1.25 of the typical one (95th percentile above), while
 * a merged pair of 1.4 areas, counted as one by plain rounding, counts two. Any blob is at least one.
 */
export function peopleInBlob(area: number, personPixels: number, visibleShare = 1): number {
  if (!(personPixels > 0)) return 1;
  return Math.max(1, 1 + Math.floor((area / personPixels - 1) / visibleShare + 0.5));
}

/**
 * Tallies blobs and foreground per zone.
 *
 * A blob belongs to every zone whose polygon contains its anchor point (the foot point, bottom
 * centre of the bounding box, for rooms; the centroid for shelves), taken at pixel centres in
 * normalised coordinates; zones drop blobs smaller than their minimum. A room counts people by
 * {@link peopleInBlob} (against the person area at the blob's foot row when the zone has a
 * perspective model, each further person in a merged blob `zone.visibleShare` of one); a shelf
 * counts item blobs by plain rounding of their area in item areas (one each when it has no item area)
 * and reports its fill, the foreground share of its pixels. The mask is a byte mask or a packed
 * one (then the fill is a population count of mask AND zone, 32 pixels a word).
 */
export function tallyZones(
  blobs: readonly Blob[],
  mask: Mask | BitMask,
  zones: readonly PreparedZone[],
): FrameTally {
  const { width, height } = mask;
  const result: Record<string, ZoneTally> = {};
  const claimed = new Map<number, number>();
  for (const zone of zones) {
    const pixels = zone.pixels;
    const foreground = 'words' in mask ? foregroundBits(mask, zone) : foregroundBytes(mask, pixels);
    let count = 0;
    let kept = 0;
    for (const blob of blobs) {
      if (blob.area < (zone.minBlobPixelsAt ? zone.minBlobPixelsAt(blob.footY) : zone.minBlobPixels)) continue;
      const [ax, ay] = zone.anchor === 'foot' ? [blob.footX, blob.footY] : [blob.cx, blob.cy];
      if (!pointInPolygon((ax + 0.5) / width, (ay + 0.5) / height, zone.polygon)) continue;
      const people = peopleInBlob(blob.area, zone.personPixelsAt ? zone.personPixelsAt(blob.footY) : zone.personPixels, zone.visibleShare);
      count += people;
      kept++;
      if (!claimed.has(blob.label)) claimed.set(blob.label, people);
    }
    result[zone.id] = { count, fill: pixels.length > 0 ? foreground / pixels.length : 0, blobs: kept };
  }
  let total = 0;
  for (const people of claimed.values()) total += people;
  return { total, zones: result };
}

/** Set pixels of a byte mask among the zone's pixels. */
function foregroundBytes(mask: Mask, pixels: Uint32Array): number {
  const data = mask.data;
  let foreground = 0;
  for (let p = 0; p < pixels.length; p++) foreground += data[pixels[p]];
  return foreground;
}

/** Set pixels of a packed mask among the zone's pixels: popcount(mask ∧ zone) over the rows it spans. */
function foregroundBits(mask: BitMask, zone: PreparedZone): number {
  const data = mask.data;
  const bits = zone.bits.data;
  if (zone.bits.words !== mask.words || bits.length !== data.length) throw new RangeError(`zone ${zone.id}: prepared for another size than the ${mask.width}×${mask.height} mask`);
  let foreground = 0;
  for (let w = zone.firstWord; w < zone.lastWord; w++) {
    const v = data[w] & bits[w];
    if (v !== 0) foreground += popcount32(v);
  }
  return foreground;
}
