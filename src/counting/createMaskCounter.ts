import { createMask, type Mask } from '../frames/frame.ts';
import { closeMask } from '../vision/closeMask.ts';
import { labelComponents, type Blob } from '../vision/labelComponents.ts';
import { openMask } from '../vision/openMask.ts';
import { prepareZones, type PreparedZone, type PrepareZonesOptions } from '../vision/prepareZones.ts';
import { tallyZones, type FrameTally } from '../vision/tallyZones.ts';
import type { Zone } from './zone.ts';

export interface MaskCounterOptions extends PrepareZonesOptions {
  /** Radius of the opening that removes specks, pixels; default 1. 0 skips it. */
  openRadius?: number;
  /** Radius of the closing that fills gaps inside a blob, pixels; default 2. 0 skips it. */
  closeRadius?: number;
  /** Pixel connectivity of blobs: 4 or 8; default 8. */
  connectivity?: 4 | 8;
}

export interface MaskTally extends FrameTally {
  readonly blobs: readonly Blob[];
  readonly foregroundShare: number;
}

export interface MaskCounter {
  readonly zones: readonly PreparedZone[];
  /** Cleans a raw foreground mask (opening, closing), labels blobs and tallies them per zone. */
  count(raw: Mask): MaskTally;
  /** The cleaned mask of the last call (an internal buffer). */
  lastMask(): Mask;
}

/**
 * The stages after foreground detection, for any detector: opening → closing → connected
 * components → per-zone tally, with all buffers allocated once. `residuum evaluate` runs the
 * baseline detector through it, so both methods are counted by the same rules.
 */
export function createMaskCounter(
  size: { width: number; height: number },
  zones: readonly Zone[],
  options: MaskCounterOptions = {},
): MaskCounter {
  const { openRadius = 1, closeRadius = 2, connectivity = 8 } = options;
  const { width, height } = size;
  const d = width * height;
  const prepared = prepareZones(zones, size, options);
  const opened = createMask(width, height);
  const closed = createMask(width, height);
  const labels = new Int32Array(d);
  const labelScratch = new Int32Array(Math.ceil(d / 2) + 1);
  const morphScratch = new Uint8Array(2 * d);
  let last: Mask = closed;
  return {
    zones: prepared,
    count(raw) {
      let mask: Mask = raw;
      if (openRadius > 0) mask = openMask(mask, { radius: openRadius, out: opened, scratch: morphScratch });
      if (closeRadius > 0) mask = closeMask(mask, { radius: closeRadius, out: mask === raw ? opened : closed, scratch: morphScratch });
      if (mask === raw) {
        closed.data.set(raw.data);
        mask = closed;
      }
      last = mask;
      const components = labelComponents(mask, { connectivity, out: labels, scratch: labelScratch });
      // Every set pixel of the mask lies in exactly one blob.
      let foreground = 0;
      for (const blob of components.blobs) foreground += blob.area;
      return { ...tallyZones(components.blobs, mask, prepared), blobs: components.blobs, foregroundShare: foreground / d };
    },
    lastMask: () => last,
  };
}
