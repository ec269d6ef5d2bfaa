import type { GreyFrame, Mask } from '../frames/frame.ts';
import { createMask } from '../frames/frame.ts';
import { closeMask } from '../vision/closeMask.ts';
import { labelComponents, type Blob } from '../vision/labelComponents.ts';
import { openMask } from '../vision/openMask.ts';
import { prepareZones, type PreparedZone, type PrepareZonesOptions } from '../vision/prepareZones.ts';
import { frameNoiseScale } from '../vision/frameNoiseScale.ts';
import { residualEnergy } from '../vision/residualEnergy.ts';
import type { Subspace } from '../vision/subspace.ts';
import { tallyZones, type FrameTally } from '../vision/tallyZones.ts';
import { thresholdResidual } from '../vision/thresholdResidual.ts';
import type { Zone } from './zone.ts';

/** The zone used when a camera has no zones: the whole frame, counting people. */
export const wholeFrameZone: Zone = { id: 'all', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] };

export interface CounterOptions extends PrepareZonesOptions {
  /** Radius of the smoothing window before thresholding, pixels; default 1 (3×3). */
  smoothRadius?: number;
  /** Radius of the opening that removes specks, pixels; default 1. 0 skips it. */
  openRadius?: number;
  /** Radius of the closing that fills gaps inside a blob, pixels; default 2. 0 skips it. */
  closeRadius?: number;
  /** Pixel connectivity of blobs: 4 (edges) or 8 (edges and corners); default 8. */
  connectivity?: 4 | 8;
  /**
   * Raise thresholds when a whole frame is noisier than the learning frames (frameNoiseScale);
   * default true. The scale is never below 1: a quiet frame keeps the learned thresholds.
   */
  adaptToFrameNoise?: boolean;
}

/** Everything counted in one frame. */
export interface FrameCount extends FrameTally {
  /** Blobs found in the frame (before the per-zone minimum-size filter). */
  readonly blobs: readonly Blob[];
  /** Share of the frame's pixels that are foreground, 0..1. */
  readonly foregroundShare: number;
  /** Distance from feature space ‖r‖², grey levels². */
  readonly dffs: number;
  /** Distance in feature space (Mahalanobis term of the subspace coordinates). */
  readonly difs: number;
  /** Mean (r/σ)² over the frame: about 1 for a scene the model explains. */
  readonly normalisedEnergy: number;
  /** Frame noise relative to the learning frames (median (r/σ)² / median χ²₁); 1 = as learned. */
  readonly noiseScale: number;
}

export interface Counter {
  readonly width: number;
  readonly height: number;
  /** The zones as prepared at the model's size. */
  readonly zones: readonly PreparedZone[];
  /** Counts one frame of the model's size. The returned blobs are fresh; internal buffers are reused. */
  count(frame: GreyFrame): FrameCount;
  /** The foreground mask of the last counted frame (a view of an internal buffer, overwritten by the next count). */
  lastMask(): Mask;
}

/**
 * One camera's counting pipeline: residual energy against the empty-scene model → threshold in
 * noise units → opening and closing → connected components → per-zone tally. All per-frame
 * buffers are allocated once here and reused for every frame.
 */
export function createCounter(model: Subspace, zones: readonly Zone[] = [wholeFrameZone], options: CounterOptions = {}): Counter {
  const { smoothRadius = 1, openRadius = 1, closeRadius = 2, connectivity = 8, adaptToFrameNoise = true } = options;
  const { width, height } = model;
  const d = width * height;
  const prepared = prepareZones(zones.length > 0 ? zones : [wholeFrameZone], model, options);

  const inverseNoiseVariance = new Float32Array(d);
  for (let i = 0; i < d; i++) inverseNoiseVariance[i] = 1 / (model.noise[i] * model.noise[i]);
  // Where zones overlap, the lower (more sensitive) threshold applies; elsewhere the default.
  const thresholds = new Float32Array(d).fill(options.threshold ?? 3);
  for (const zone of prepared) {
    for (const p of zone.pixels) thresholds[p] = Math.min(thresholds[p], zone.threshold);
  }

  const energy = new Float32Array(d);
  const coefficients = new Float64Array(model.components);
  const scratch = new Float32Array(d);
  const sampleScratch = new Float32Array(Math.ceil(d / 7));
  const raw = createMask(width, height);
  const opened = createMask(width, height);
  const closed = createMask(width, height);
  const labels = new Int32Array(d);
  const labelScratch = new Int32Array(Math.ceil(d / 2) + 1);
  const morphScratch = new Uint8Array(2 * d);
  let last: Mask = closed;

  return {
    width,
    height,
    zones: prepared,
    count(frame) {
      const residual = residualEnergy(model, frame, { out: energy, outCoefficients: coefficients, inverseNoiseVariance, scratch: sampleScratch });
      const noiseScale = frameNoiseScale(energy, inverseNoiseVariance, { scratch: sampleScratch });
      thresholdResidual(energy, inverseNoiseVariance, model, {
        threshold: thresholds,
        noiseScale: adaptToFrameNoise ? Math.max(1, noiseScale) : 1,
        radius: smoothRadius,
        out: raw,
        scratch,
      });
      let mask: Mask = raw;
      if (openRadius > 0) mask = openMask(mask, { radius: openRadius, out: opened, scratch: morphScratch });
      if (closeRadius > 0) mask = closeMask(mask, { radius: closeRadius, out: mask === raw ? opened : closed, scratch: morphScratch });
      last = mask;
      const components = labelComponents(mask, { connectivity, out: labels, scratch: labelScratch });
      // Every set pixel of the mask lies in exactly one blob.
      let foreground = 0;
      for (const blob of components.blobs) foreground += blob.area;
      const tally = tallyZones(components.blobs, mask, prepared);
      return {
        ...tally,
        blobs: components.blobs,
        foregroundShare: foreground / d,
        dffs: residual.dffs,
        difs: residual.difs,
        normalisedEnergy: residual.normalisedEnergy,
        noiseScale,
      };
    },
    lastMask: () => last,
  };
}
