import type { ColourFrame } from '../domain/colourFrame.ts';
import type { GreyFrame, Mask } from '../domain/frame.ts';
import { assertSameSize, createMask } from '../domain/frame.ts';
import type { ChromaticityModel } from '../vision/chromaticityModel.ts';
import { suppressShadows, type SuppressShadowsOptions } from '../vision/suppressShadows.ts';
import type { Blob } from '../vision/labelComponents.ts';
import type { PreparedZone } from '../vision/prepareZones.ts';
import { createBitMask, packMask, unpackMask } from '../vision/bitMask.ts';
import { clearLightChanges } from '../vision/clearLightChanges.ts';
import { countingKernels, type CountingKernels } from '../vision/countingKernels.ts';
import { frameNoiseScale } from '../vision/frameNoiseScale.ts';
import { residualEnergy } from '../vision/residualEnergy.ts';
import { refreshCoefficientSample, sampleCoefficientPixels } from '../vision/residualEnergy/coefficientSample.ts';
import type { Subspace } from '../vision/subspace.ts';
import type { FrameTally } from '../vision/tallyZones.ts';
import { COUNTER_STAGES, CounterStage, createMaskCounter, type MaskCounterOptions } from './createMaskCounter.ts';
import { thresholdResidual } from '../vision/thresholdResidual.ts';
import type { Zone } from '../domain/zone.ts';

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
   * number ≥ 1; the residual is still computed at every pixel. Default 7: a seventh of the cost
   * of the robust projection, with coordinates that differ from the all-pixel ones by far less
   * than the noise (k coordinates fitted on d / 7 pixels; on both synthetic scenes the counts
   * match those of strides 1 and 3 to 0.1 % of zone-frames). 7 is prime to the usual widths, so
   * the sampled pixels slant across every column. 1 uses every pixel.
   */
  coefficientStride?: number;
  /**
   * Read the clock around every stage and add the times to the counter's `stageTimes`; default
   * false (then `stageTimes` stays 0).
   */
  timeStages?: boolean;
  /**
   * Colour mode: the empty scene's colour statistics (fitChromaticity). Then every count needs
   * the frame's colour too, and foreground pixels that are a cast shadow are cleared between the
   * threshold and the morphology (suppressShadows). Default: none (grey only).
   */
  colourModel?: ChromaticityModel;
  /** Colour mode: the bounds of a shadow (see suppressShadows; its defaults). */
  shadows?: Pick<SuppressShadowsOptions, 'alphaLow' | 'alphaHigh' | 'maxChromaDistortion'>;
  /**
   * Count with the WebAssembly SIMD kernels (countingKernels) and the packed-mask stages where
   * they apply (1 to 24 components, coefficientStride ≥ 2, smoothRadius 1; and the kernels are
   * on, see setKernelsEnabled); default true. false always takes the JS stages.
   */
  kernels?: boolean;
  /**
   * Clear foreground that is only a change of light on the scene's texture (a cast shadow, a
   * patch of sun, a lamp) before the morphology (clearLightChanges against the model's mean);
   * default true.
   */
  clearLight?: boolean;
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
  /** Colour mode only: share of the frame's pixels the threshold found and shadow suppression cleared, 0..1. */
  readonly shadowShare?: number;
}

export interface Counter {
  readonly width: number;
  readonly height: number;
  /** The zones as prepared at the model's size. */
  readonly zones: readonly PreparedZone[];
  /**
   * Counts one frame of the model's size; in colour mode `colour` (the same picture in colour) is
   * required. The returned blobs are fresh; internal buffers are reused.
   */
  count(frame: GreyFrame, colour?: ColourFrame): FrameCount;
  /** Bytes of WebAssembly memory the counter's kernels hold (0 where it takes the JS stages). */
  readonly kernelBytes: number;
  /** The foreground mask of the last counted frame (a view of an internal buffer, overwritten by the next count). */
  lastMask(): Mask;
  /**
   * Milliseconds spent in each stage (indexed by CounterStage, named by COUNTER_STAGES), summed
   * over every count since the counter was made or the caller last zeroed it; only with the
   * `timeStages` option.
   */
  readonly stageTimes: Float64Array;
}

/** createCounter's counter, with what the drift adaptation needs of it. */
export interface SubspaceCounter extends Counter {
  /** The robust subspace coordinates y of the last counted frame (length k; the counter's own buffer). */
  lastCoefficients(): Float64Array;
  /**
   * Takes the model's basis again after the caller changed `model.basis` in place (the drifting
   * counter's rescaled eigen-images): refreshes the coefficient sample and the kernels' planes
   * in their own buffers; no new counter, no new memory.
   */
  refreshBasis(): void;
  /**
   * Takes `model.mean` again after the caller changed it in place (the drifting counter's
   * background update); the kernels copy it only then, not on every frame.
   */
  refreshMean(): void;
}

/**
 * One camera's counting pipeline: residual energy against the empty-scene model → threshold in
 * noise units → (colour mode: clear cast shadows) → opening and closing → connected components →
 * per-zone tally. All per-frame buffers are allocated once here and reused for every frame.
 *
 * In colour mode the brightness a shadow is measured against is the subspace's: the robust
 * projection's reconstruction μ_i + Σ_j B_ij y_j of the frame's background over the mean image
 * μ_i, so that a frame lit more dimly, or a lamp switched off, is not taken for one large shadow
 * (computed at the foreground pixels only).
 */
export function createCounter(model: Subspace, zones: readonly Zone[] = [wholeFrameZone], options: CounterOptions = {}): SubspaceCounter {
  const { smoothRadius = 1, adaptToFrameNoise = true, coefficientStride = 7, timeStages = false, colourModel, shadows = {}, kernels: useKernels = true, clearLight = true } = options;
  if (colourModel !== undefined) assertSameSize(model, colourModel, 'colour model');
  const { width, height } = model;
  const d = width * height;
  const stageTimes = new Float64Array(COUNTER_STAGES.length);
  const timed = timeStages ? stageTimes : undefined;
  const stages = createMaskCounter(model, zones.length > 0 ? zones : [wholeFrameZone], { ...options, stageTimes: timed });
  const prepared = stages.zones;

  // Where zones overlap, the lower (more sensitive) threshold applies; elsewhere the default.
  const thresholds = new Float32Array(d).fill(options.threshold ?? 3);
  for (const zone of prepared) {
    for (const p of zone.pixels) thresholds[p] = Math.min(thresholds[p], zone.threshold);
  }

  const coefficients = new Float64Array(model.components);
  const raw = createMask(width, height);
  const colourBuffers = colourModel === undefined ? undefined : {
    unshadowed: createMask(width, height),
    brightnessScale: new Float32Array(d),
    distortion: { alpha: new Float32Array(d), cd: new Float32Array(d) },
  };
  const coefficientSample = coefficientStride > 1 ? sampleCoefficientPixels(model, coefficientStride) : undefined;
  const kernels = useKernels && coefficientSample !== undefined && smoothRadius === 1 ? countingKernels(model, { coefficientSample, thresholds, followMean: false }) : undefined;
  const rawBits = createBitMask(width, height);
  const lightBuffers = clearLight ? { lit: createMask(width, height), scratch: new Float64Array(5 * (width + 1) * (height + 1)) } : undefined;
  /** The mask with changes of light cleared (lightBuffers.lit), or the mask itself without clearLight. */
  const withoutLight = (mask: Mask, frame: GreyFrame): Mask =>
    lightBuffers === undefined ? mask : clearLightChanges(frame, { width, height, data: model.mean }, mask, model.noise, { out: lightBuffers.lit, scratch: lightBuffers.scratch });
  // The JS stages' buffers, only where the kernels do not run.
  const js = kernels !== undefined ? undefined : {
    inverseNoiseVariance: Float32Array.from(model.noise, (sigma) => 1 / (sigma * sigma)),
    energy: new Float32Array(d),
    scratch: new Float32Array(d),
    sampleScratch: new Float32Array(Math.ceil(d / 7)),
  };

  return {
    width,
    height,
    zones: prepared,
    kernelBytes: (kernels?.memoryBytes ?? 0) + stages.kernelBytes,
    count(frame, colour) {
      if (colourBuffers !== undefined) {
        if (colour === undefined) throw new RangeError('this counter is in colour mode: count(frame, colour) needs the colour frame');
        assertSameSize(model, colour, 'colour frame');
      }
      if (js === undefined) return countWithKernels(kernels!, frame, colour);
      const { inverseNoiseVariance, energy, scratch, sampleScratch } = js;
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
      const shadowShare = colourBuffers === undefined ? undefined : clearShadows(colour!, colourBuffers);
      return {
        ...stages.count(withoutLight(colourBuffers === undefined ? raw : colourBuffers.unshadowed, frame)),
        ...(shadowShare === undefined ? {} : { shadowShare }),
        dffs: residual.dffs,
        difs: residual.difs,
        normalisedEnergy: residual.normalisedEnergy,
        noiseScale,
      };
    },
    lastMask: () => stages.lastMask(),
    stageTimes,
    lastCoefficients: () => coefficients,
    refreshBasis() {
      if (coefficientSample !== undefined) refreshCoefficientSample(coefficientSample, model.components);
      kernels?.refreshBasis();
    },
    refreshMean() {
      kernels?.refreshMean();
    },
  };

  /** count() on the kernels: the packed threshold mask goes straight to the packed stages (in colour mode, unpacked for the shadows). */
  function countWithKernels(run: CountingKernels, frame: GreyFrame, colour: ColourFrame | undefined): FrameCount {
    const t0 = timed === undefined ? 0 : performance.now();
    const residual = run.residual(frame);
    coefficients.set(residual.coefficients);
    const t1 = timed === undefined ? 0 : performance.now();
    const noiseScale = run.noiseScale();
    const t2 = timed === undefined ? 0 : performance.now();
    run.threshold(adaptToFrameNoise ? Math.max(1, noiseScale) : 1, rawBits);
    if (timed !== undefined) {
      const t3 = performance.now();
      timed[CounterStage.residual] += t1 - t0;
      timed[CounterStage.noiseScale] += t2 - t1;
      timed[CounterStage.threshold] += t3 - t2;
    }
    let tally: ReturnType<typeof stages.count>;
    let shadowShare: number | undefined;
    if (colourBuffers === undefined && lightBuffers === undefined) tally = stages.countBits(rawBits);
    else {
      unpackMask(rawBits, raw);
      if (colourBuffers !== undefined) shadowShare = clearShadows(colour!, colourBuffers);
      // Packed again, so that the morphology and labelling stay on the packed path.
      tally = stages.countBits(packMask(withoutLight(colourBuffers === undefined ? raw : colourBuffers.unshadowed, frame), rawBits));
    }
    return {
      ...tally,
      ...(shadowShare === undefined ? {} : { shadowShare }),
      dffs: residual.dffs,
      difs: residual.difs,
      normalisedEnergy: residual.normalisedEnergy,
      noiseScale,
    };
  }

  /** Clears the cast shadows of `raw` into buffers.unshadowed; returns the share of pixels cleared. */
  function clearShadows(colour: ColourFrame, buffers: NonNullable<typeof colourBuffers>): number {
    const { components: k, mean, basis } = model;
    const { brightnessScale, unshadowed, distortion } = buffers;
    const r = raw.data;
    let found = 0;
    for (let i = 0, b = 0; i < d; i++, b += k) {
      if (r[i] === 0) continue;
      found++;
      let z = mean[i];
      for (let j = 0; j < k; j++) z += basis[b + j] * coefficients[j];
      brightnessScale[i] = mean[i] >= 1 && z >= 1 ? z / mean[i] : 1;
    }
    suppressShadows(raw, colour, colourModel!, { ...shadows, brightnessScale, out: unshadowed, scratch: distortion });
    let kept = 0;
    for (let i = 0; i < d; i++) kept += unshadowed.data[i];
    return (found - kept) / d;
  }
}
