import { outputMask, type Mask } from './frame.ts';
import type { NormalisedPoint } from './zone.ts';

export interface RasterizeZoneOptions {
  /** Mask to write into instead of allocating. */
  out?: Mask;
}

/**
 * The pixels of a width×height frame whose centres ((x + ½) / width, (y + ½) / height) lie inside
 * a polygon given in normalised coordinates: scanline fill with the even–odd rule, the same rule
 * as pointInPolygon, so a pixel is in the mask exactly when its centre is in the polygon.
 *
 * Example: the polygon [[0, 0], [0.5, 0], [0.5, 1], [0, 1]] on a 4×2 frame sets columns 0 and 1.
 */
export function rasterizeZone(
  polygon: readonly NormalisedPoint[],
  size: { width: number; height: number },
  options: RasterizeZoneOptions = {},
): Mask {
  const { width, height } = size;
  const mask = outputMask(width, height, options.out);
  mask.data.fill(0);
  const crossings: number[] = [];
  for (let y = 0; y < height; y++) {
    const cy = (y + 0.5) / height;
    crossings.length = 0;
    for (let i = 0, j = polygon.length - 1; i < polygon.length; j = i++) {
      const [xi, yi] = polygon[i];
      const [xj, yj] = polygon[j];
      if (yi > cy !== yj > cy) crossings.push(((xj - xi) * (cy - yi)) / (yj - yi) + xi);
    }
    crossings.sort((a, b) => a - b);
    for (let c = 0; c + 1 < crossings.length; c += 2) {
      // Pixel centres cx with crossings[c] <= cx < crossings[c + 1] are inside.
      const from = Math.max(0, Math.ceil(crossings[c] * width - 0.5));
      const to = Math.min(width - 1, Math.ceil(crossings[c + 1] * width - 0.5) - 1);
      for (let x = from; x <= to; x++) mask.data[y * width + x] = 1;
    }
  }
  return mask;
}
