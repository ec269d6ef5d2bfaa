import type { GreyFrame, Mask } from '../frames/frame.ts';
import { createMask } from '../frames/frame.ts';
import type { Blob } from '../vision/labelComponents.ts';
import type { PreparedZone } from '../vision/prepareZones.ts';
import { frameNoiseScale } from '../vision/frameNoiseScale.ts';
import { residualEnergy, sampleCoefficientPixels } from '../vision/residualEnergy.ts';
import type { Subspace } from '../vision/subspace.ts';
import type { FrameTally } from '../vision/tallyZones.ts';
import { COUNTER_STAGES, CounterStage, createMaskCounter, type MaskCounterOptions } from './createMaskCounter.ts';
import { thresholdResidual } from '../vision/thresholdResidual.ts';
import type { Zone } from './zone.ts';

/** The zone used when a camera has no zones: the whole frame, counting people. */
export const wholeFrameZone: Zone = { id: 'all', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] };

export interface CounterOptions extends MaskCounterOptions {
  /** Radius of the smoothing window before thresholding, pixels; default 1 (3×3). */
  smoothRadius?: number;
  /**
   * Raise thresholds when a whole frame is noisier than the learning frames (frameNoiseScale);
   * default true. The scale is never below 1: a quiet frame keeps the learned thresholds.
   */
  adaptToFrameNoise?: boolean;
  /**
   * Solve the subspace coordinates on every n-th pixel (see sampleCoefficientPixels), a whole
   * number ≥ 1; the residual is still computed at every pixel. Default 3: a third of the cost of
   * the robust projection, with coordinates that differ from the all-pixel ones by far less than
   * the noise. 1 uses every pixel.
   */
  coefficientStride?: number;
  /**
   * Read the clock around every stage and add the times to the counter's `stageTimes`; default
   * false (then `stageTimes` stays 0).
   */
  timeStages?: boolean;
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
  /**
   * Milliseconds spent in each stage (indexed by CounterStage, named by COUNTER_STAGES), summed
   * over every count since the counter was made or the caller last zeroed it; only with the
   * `timeStages` option.
   */
  readonly stageTimes: Float64Array;
}

/**
 * One camera's counting pipeline: residual energy against the empty-scene model → threshold in
 * noise units → opening and closing → connected components → per-zone tally. All per-frame
 * buffers are allocated once here and reused for every frame.
 */
export function createCounter(model: Subspace, zones: readonly Zone[] = [wholeFrameZone], options: CounterOptions = {}): Counter {
  const { smoothRadius = 1, adaptToFrameNoise = true, coefficientStride = 3, timeStages = false } = options;
  const { width, height } = model;
  const d = width * height;
  const stageTimes = new Float64Array(COUNTER_STAGES.length);
  const timed = timeStages ? stageTimes : undefined;
  const stages = createMaskCounter(model, zones.length > 0 ? zones : [wholeFrameZone], { ...options, stageTimes: timed });
  const prepared = stages.zones;

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
  const coefficientSample = coefficientStride > 1 ? sampleCoefficientPixels(model, coefficientStride) : undefined;

  return {
    width,
    height,
    zones: prepared,
    count(frame) {
      const t0 = timed === undefined ? 0 : performance.now();
      const residual = residualEnergy(model, frame, { out: energy, outCoefficients: coefficients, inverseNoiseVariance, scratch: sampleScratch, coefficientSample });
      const t1 = timed === undefined ? 0 : performance.now();
      const noiseScale = frameNoiseScale(energy, inverseNoiseVariance, { scratch: sampleScratch });
      const t2 = timed === undefined ? 0 : performance.now();
      thresholdResidual(energy, inverseNoiseVariance, model, {
        threshold: thresholds,
        noiseScale: adaptToFrameNoise ? Math.max(1, noiseScale) : 1,
        radius: smoothRadius,
        out: raw,
        scratch,
      });
      if (timed !== undefined) {
        const t3 = performance.now();
        timed[CounterStage.residual] += t1 - t0;
        timed[CounterStage.noiseScale] += t2 - t1;
        timed[CounterStage.threshold] += t3 - t2;
      }
      return {
        ...stages.count(raw),
        dffs: residual.dffs,
        difs: residual.difs,
        normalisedEnergy: residual.normalisedEnergy,
        noiseScale,
      };
    },
    lastMask: () => stages.lastMask(),
    stageTimes,
  };
}
