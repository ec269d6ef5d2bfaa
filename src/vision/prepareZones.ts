import type { AnchorPoint, Zone, ZoneKind } from '../counting/zone.ts';
import { fitPersonArea } from './fitPersonArea.ts';
import { packMask, type BitMask } from './bitMask.ts';
import { rasterizeZone } from './rasterizeZone.ts';

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
  /** With perspective: pixels of one person whose feet are on pixel row `footY`. */
  readonly personPixelsAt?: (footY: number) => number;
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
  const { threshold = 3, personArea = 0.008, minBlobShare = 0.25, shelfMinBlobArea = 0.0005 } = options;
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
    const perspective = zone.perspective ? fitPersonArea(zone.perspective) : undefined;
    const personPixelsAt = perspective && ((footY: number) => perspective.areaAt((footY + 0.5) / size.height) * frameArea);
    // With perspective, the smallest blob kept follows the smallest expected person in the zone.
    const smallestPerson = perspective ? Math.min(...zone.polygon.map(([, y]) => perspective.areaAt(y))) : undefined;
    const minBlob = zone.minBlobArea ?? (room ? (smallestPerson ?? person ?? personArea) * minBlobShare : shelfMinBlobArea);
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
      ...(personPixelsAt && { personPixelsAt }),
    };
  });
}
