import { createMask, type Mask } from '../domain/frame.ts';
import { createBitMask, unpackMask, type BitMask } from '../vision/bitMask.ts';
import { createLabelBitRunsScratch, labelBitRuns } from '../vision/labelBitRuns.ts';
import { morphologyBitMask } from '../vision/morphologyBits.ts';
import { MAX_KERNEL_RADIUS, morphologyKernels, type SquareStep } from '../vision/morphologyKernels.ts';
import { closeMask } from '../vision/closeMask.ts';
import { labelComponents, type Blob } from '../vision/labelComponents.ts';
import { openMask } from '../vision/openMask.ts';
import { prepareZones, type PreparedZone, type PrepareZonesOptions } from '../vision/prepareZones.ts';
import { tallyZones, type FrameTally } from '../vision/tallyZones.ts';
import type { Zone } from '../domain/zone.ts';

export interface MaskCounterOptions extends PrepareZonesOptions {
  /** Radius of the opening that removes specks, pixels; default 1. 0 skips it. */
  openRadius?: number;
  /** Radius of the closing that fills gaps inside a blob, pixels; default 2. 0 skips it. */
  closeRadius?: number;
  /** Pixel connectivity of blobs: 4 or 8; default 8. */
  connectivity?: 4 | 8;
  /**
   * Where to add each stage's time of every call, milliseconds: entries
   * CounterStage.morphology, .labelling and .zones (the array is the counter's `stageTimes`);
   * default none (no clock is read).
   */
  stageTimes?: Float64Array;
  /** Run the packed-mask morphology in the WebAssembly SIMD kernels when they run here (see setKernelsEnabled); default true. */
  kernels?: boolean;
}

/** The stages of a counted frame, as indices into a counter's stage times. */
export const CounterStage = {
  residual: 0,
  noiseScale: 1,
  threshold: 2,
  morphology: 3,
  labelling: 4,
  zones: 5,
} as const;
export type CounterStage = (typeof CounterStage)[keyof typeof CounterStage];

/** Stage names in index order, as they appear in metrics and the benchmark. */
export const COUNTER_STAGES = ['residual', 'noise_scale', 'threshold', 'morphology', 'labelling', 'zones'] as const;

export interface MaskTally extends FrameTally {
  readonly blobs: readonly Blob[];
  readonly foregroundShare: number;
}

export interface MaskCounter {
  readonly zones: readonly PreparedZone[];
  /** Cleans a raw foreground mask (opening, closing), labels blobs and tallies them per zone. */
  count(raw: Mask): MaskTally;
  /**
   * As count, for a packed mask: the same stages on 32 pixels a word (morphologyBitMask,
   * labelBitRuns, tallyZones on the packed mask), with the same result.
   */
  countBits(raw: BitMask): MaskTally;
  /** Bytes of WebAssembly memory the morphology kernels hold (0 without them). */
  readonly kernelBytes: number;
  /** The cleaned mask of the last call (an internal buffer; after countBits, unpacked on the first call). */
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
  const { openRadius = 1, closeRadius = 2, connectivity = 8, stageTimes } = options;
  const { width, height } = size;
  const d = width * height;
  const prepared = prepareZones(zones, size, options);
  const opened = createMask(width, height);
  const closed = createMask(width, height);
  const labels = new Int32Array(d);
  const labelScratch = new Int32Array(Math.ceil(d / 2) + 1);
  const morphScratch = new Uint8Array(2 * d);
  const openedBits = createBitMask(width, height);
  const closedBits = createBitMask(width, height);
  const bitScratch = new Int32Array(3 * closedBits.data.length);
  // Room for a sixteenth of the worst case (every other pixel a run); it grows if a mask needs more.
  const runScratch = createLabelBitRunsScratch(width, Math.ceil(height / 16));
  // The opening then the closing as one chain of square steps, in the kernels when they run here.
  const squareSteps: SquareStep[] = [
    ...(openRadius > 0 ? (['erode', 'dilate'] as const).map((step) => ({ step, radius: openRadius })) : []),
    ...(closeRadius > 0 ? (['dilate', 'erode'] as const).map((step) => ({ step, radius: closeRadius })) : []),
  ];
  const morphology = Math.max(openRadius, closeRadius) <= MAX_KERNEL_RADIUS && options.kernels !== false ? morphologyKernels(size) : undefined;
  let last: Mask = closed;
  /** The packed cleaned mask of the last countBits, until lastMask() unpacks it. */
  let lastBits: BitMask | undefined;

  /** The zone tally of a cleaned mask's blobs, with the stage times from t0 (morphology) and t1 (labelling). */
  function tallyCleaned(blobs: Blob[], mask: Mask | BitMask, t0: number, t1: number): MaskTally {
    // Every set pixel of the mask lies in exactly one blob.
    let foreground = 0;
    for (const blob of blobs) foreground += blob.area;
    const t2 = stageTimes === undefined ? 0 : performance.now();
    const tally = tallyZones(blobs, mask, prepared);
    if (stageTimes !== undefined) {
      const t3 = performance.now();
      stageTimes[CounterStage.morphology] += t1 - t0;
      stageTimes[CounterStage.labelling] += t2 - t1;
      stageTimes[CounterStage.zones] += t3 - t2;
    }
    return { ...tally, blobs, foregroundShare: foreground / d };
  }

  return {
    zones: prepared,
    kernelBytes: morphology?.memoryBytes ?? 0,
    countBits(raw) {
      if (raw.width !== width || raw.height !== height) throw new RangeError(`mask is ${raw.width}×${raw.height}, expected ${width}×${height}`);
      const t0 = stageTimes === undefined ? 0 : performance.now();
      let mask: BitMask = raw;
      if (morphology !== undefined) mask = morphology.apply(raw, squareSteps, closedBits);
      else {
        if (openRadius > 0) mask = morphologyBitMask(mask, { steps: ['erode', 'dilate'], radius: openRadius, out: openedBits, scratch: bitScratch });
        if (closeRadius > 0) mask = morphologyBitMask(mask, { steps: ['dilate', 'erode'], radius: closeRadius, out: closedBits, scratch: bitScratch });
        if (mask === raw) mask = morphologyBitMask(raw, { out: closedBits, scratch: bitScratch });
      }
      lastBits = mask;
      const t1 = stageTimes === undefined ? 0 : performance.now();
      const { blobs } = labelBitRuns(mask, { connectivity, scratch: runScratch });
      return tallyCleaned(blobs, mask, t0, t1);
    },
    count(raw) {
      lastBits = undefined;
      const t0 = stageTimes === undefined ? 0 : performance.now();
      let mask: Mask = raw;
      if (openRadius > 0) mask = openMask(mask, { radius: openRadius, out: opened, scratch: morphScratch });
      if (closeRadius > 0) mask = closeMask(mask, { radius: closeRadius, out: mask === raw ? opened : closed, scratch: morphScratch });
      if (mask === raw) {
        closed.data.set(raw.data);
        mask = closed;
      }
      last = mask;
      const t1 = stageTimes === undefined ? 0 : performance.now();
      const { blobs } = labelComponents(mask, { connectivity, out: labels, scratch: labelScratch });
      return tallyCleaned(blobs, mask, t0, t1);
    },
    lastMask() {
      if (lastBits !== undefined) {
        last = unpackMask(lastBits, closed);
        lastBits = undefined;
      }
      return last;
    },
  };
}
