import type { NormalisedPoint } from './zone.ts';

/**
 * Whether the point (x, y) lies inside a simple polygon, by the even–odd crossing rule
 * (a ray to the right crosses the boundary an odd number of times; Shimrat 1962, as in
 * W. R. Franklin's PNPOLY). Points exactly on a left or top edge (smaller x or y; y runs down)
 * count as inside and on a right or bottom edge as outside, so that polygons sharing an edge never
 * both claim a point.
 *
 * Example: pointInPolygon(0.5, 0.5, [[0, 0], [1, 0], [1, 1], [0, 1]]) === true.
 */
export function pointInPolygon(x: number, y: number, polygon: readonly NormalisedPoint[]): boolean {
  let inside = false;
  for (let i = 0, j = polygon.length - 1; i < polygon.length; j = i++) {
    const [xi, yi] = polygon[i];
    const [xj, yj] = polygon[j];
    if (yi > y !== yj > y) {
      const xCross = ((xj - xi) * (y - yi)) / (yj - yi) + xi;
      if (x < xCross) inside = !inside;
    }
  }
  return inside;
}
