import type { Mask } from '../domain/frame.ts';
import type { PreparedZone } from './prepareZones.ts';

/** A zone's foreground in one frame, measured in sizes of one person where the pixels are. */
export interface ZoneForeground {
  /**
   * Foreground area in people: Σ over the zone's foreground pixels of 1 / (pixels of one person
   * at that pixel's row). One person alone is about 1, wherever they stand.
   */
  readonly area: number;
  /**
   * Foreground edge in person heights: Σ over the zone's foreground pixels on the edge of the
   * foreground (a 4-neighbour is background or outside the frame) of 1 / √(pixels of one person
   * at that row). It grows with the number of separate shapes more than the area does.
   */
  readonly edge: number;
}

/**
 * Perspective-normalised foreground features of each zone (Chan, Liang & Vasconcelos 2008,
 * "Privacy preserving crowd monitoring": segment area and perimeter, each pixel weighted by the
 * perspective map, area by the map and edges by its square root), for the count regression of
 * calibrateZones. The perspective map here is the zone's own person size: its perspective line
 * where it has one (`personPixelsAt` of the pixel's row), its single person area otherwise. A
 * zone without any person size (a shelf counting each blob as one) gets raw pixel counts.
 *
 * Pixels are the zone's own (by position), not the blobs anchored in it: the features describe
 * what the camera sees in the zone, and calibration learns how that relates to people.
 */
export function measureZoneForeground(mask: Mask, zones: readonly PreparedZone[]): ZoneForeground[] {
  const { width, height, data } = mask;
  return zones.map((zone) => {
    let area = 0;
    let edge = 0;
    let row = -1;
    let areaWeight = 1;
    let edgeWeight = 1;
    for (const p of zone.pixels) {
      if (!data[p]) continue;
      const y = (p / width) | 0;
      if (y !== row) {
        row = y;
        const person = zone.personPixelsAt ? zone.personPixelsAt(y) : zone.personPixels;
        areaWeight = person > 0 ? 1 / person : 1;
        edgeWeight = person > 0 ? 1 / Math.sqrt(person) : 1;
      }
      area += areaWeight;
      const x = p - y * width;
      const onEdge = x === 0 || x === width - 1 || y === 0 || y === height - 1 || !data[p - 1] || !data[p + 1] || !data[p - width] || !data[p + width];
      if (onEdge) edge += edgeWeight;
    }
    return { area, edge };
  });
}
