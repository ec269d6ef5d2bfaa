import { createMask, type GreyFrame, type Mask } from '../domain/frame.ts';
import { adaptBackground, adaptBackgroundScratch } from '../vision/adaptBackground.ts';
import { dilate } from '../vision/dilate.ts';
import { findGhosts, type FindGhostsOptions } from '../vision/findGhosts.ts';
import type { Blob } from '../vision/labelComponents.ts';
import { rescaleBasis } from '../vision/rescaleBasis.ts';
import type { Subspace } from '../vision/subspace.ts';
import { createCounter, wholeFrameZone, type Counter, type CounterOptions } from './createCounter.ts';
import type { Zone } from '../domain/zone.ts';

export interface DriftingCounterOptions extends CounterOptions {
  /** Follow slow drift of the empty scene (false: the learned model is used as it is, like createCounter); default true. */
  adaptToDrift?: boolean;
  /**
   * Time constant of forgetting, seconds (> 0): a drift the subspace cannot explain is followed
   * with a lag of about this long; the rate of an update Δt after the last is 1 − e^(−Δt/τ).
   * Default 10.
   */
  driftSeconds?: number;
  /**
   * Rescale the eigen-images to the adapted mean's light (see rescaleBasis) once the mean has
   * moved by this much since the last rescaling: the root mean square of its change relative to
   * the learned mean, > 0; default 0.01. At most once per `driftSeconds`; Infinity never rescales.
   */
  rescaleAfter?: number;
  /** Least time between two updates of the model, seconds (≥ 0); default 1. Frames in between are only counted. */
  updateSeconds?: number;
  /** Pixels around foreground left out of the update, a dilation radius (whole number ≥ 0); default ⌈height / 40⌉. */
  margin?: number;
  /** "Maybe foreground" level in noise units below the threshold: brighter residuals are not learned (see adaptBackground); default 2. */
  maybeLevel?: number;
  /** No update while the frame noise scale (see frameNoiseScale) exceeds this (the whole view changed); ≥ 1, default 2. */
  maxNoiseScale?: number;
  /** No update while more than this share of the frame is foreground, 0..1; default 0.5. */
  maxForegroundShare?: number;
  /**
   * Clear ghosts (see findGhosts): foreground whose outline is in the background and not in the
   * frame — someone who stood still while the empty scene was learned and has walked off — is
   * taken into the mean once it has been a ghost at two updates in a row. Only while following
   * drift; default false (not yet safe for people sitting still: some are taken for ghosts).
   * An object: the options of findGhosts.
   */
  clearGhosts?: boolean | FindGhostsOptions;
  /** The clock, epoch ms, read once per counted frame; default Date.now (frames are counted as they arrive). */
  clock?: () => number;
  /**
   * A counter made before for the same model and size (e.g. before the zones changed) whose
   * adapted background this one continues from; ignored unless it is a drifting counter of a
   * model of the same size and components.
   */
  continueFrom?: Counter;
}

/** How far the model has followed the scene. */
export interface DriftState {
  /** Updates made. */
  readonly updates: number;
  /** Root mean square difference between the adapted and the learned mean, grey levels. */
  readonly meanShift: number;
  /** Pixels absorbed as static objects so far (counted once per absorption). */
  readonly absorbedPixels: number;
  /** Times the eigen-images were rescaled to the adapted mean's light. */
  readonly rescales: number;
  /** Pixels cleared as ghosts so far (counted once per clearing). */
  readonly ghostPixels: number;
}

export interface DriftingCounter extends Counter {
  /** The model in use (a copy whose mean follows the scene), or the learned one when not adapting. */
  model(): Subspace;
  /** How far the model has drifted from the learned one. */
  driftState(): DriftState;
  /**
   * What clearing ghosts changed in the mean, per pixel (0 where no ghost was cleared): added to
   * the learned mean, it gives the empty scene without what had gone (see repairedModel in
   * findPersonSize). A view of the counter's own array.
   */
  ghostRepair(): Float32Array;
}

/** The adapted mean of each drifting counter, for `continueFrom`. */
const adaptedMeans = new WeakMap<Counter, { readonly model: Subspace }>();

/**
 * createCounter with a background that follows slow drift of the scene (daylight, lamps, exposure)
 * and, per zone, absorbs changed but static objects after a while.
 *
 * The counter keeps its own copy of the model. Its mean is updated in place between frames and
 * the inner counter told so (refreshMean); the noise levels it precomputes from (the inverse
 * noise variances, the thresholds) do not change. At most every `updateSeconds`, after
 * counting a frame:
 *
 * 1. Background pixels: not in the frame's cleaned foreground mask dilated by `margin`; the
 *    update (adaptBackground) also leaves out pixels above the `maybeLevel`, so soft edges and
 *    faint parts of people that stay under the threshold are not learned either.
 * 2. The mean moves by the forgetting factor 1 − e^(−Δt/τ) towards the part of the frame the
 *    subspace cannot explain, and under foreground with the relative drift around it (see
 *    adaptBackground). No update when the whole view changed (noise scale above
 *    `maxNoiseScale`: that is for view-change detection and re-learning, not drift) or most of
 *    the frame is foreground.
 * 3. Absorption: a pixel that has been foreground at every update for a zone's `absorbSeconds`
 *    takes its residual into the mean at once, when every zone containing it sets
 *    `absorbSeconds` (the longest applies). Zones without it (rooms by default) never absorb:
 *    a person who sits still for hours is still counted.
 * 4. Eigen-images: once the mean has moved by `rescaleAfter` (relative, RMS) since the last
 *    time, the learned eigen-images are rescaled to its light (rescaleBasis: under a sunbeam the
 *    learned lamp brightens the floor more than it did while learning; an absorbed box varies
 *    with its own brightness, not the floor's). The rescaled eigen-images are written over the
 *    counter's own copy of the basis, and the inner counter takes them in place (refreshBasis:
 *    its coefficient sample and kernel planes), before the next frame: no new counter or memory.
 *
 * Cost per update: the subspace coordinates are the counter's robust ones of the same frame
 * (no fit of its own), the rest is a few passes over the pixels in Float32 arrays (adaptBackground;
 * the field's running sums in Float64); a rescale is two passes of k²/2 multiply-adds per pixel
 * (rescaleBasis) and a copy of the basis into the kernels' planes.
 *
 * The learned model is never written. With `adaptToDrift: false` and no zone setting
 * `absorbSeconds`, this is createCounter on the learned model, frame for frame. With
 * `adaptToDrift: false` and absorbing zones, only absorption changes the model.
 */
export function createDriftingCounter(
  model: Subspace,
  zones: readonly Zone[] = [wholeFrameZone],
  options: DriftingCounterOptions = {},
): DriftingCounter {
  const {
    adaptToDrift = true,
    driftSeconds = 10,
    rescaleAfter = 0.01,
    updateSeconds = 1,
    margin = Math.ceil(model.height / 40),
    maybeLevel = 2,
    maxNoiseScale = 2,
    maxForegroundShare = 0.5,
    clock = Date.now,
    continueFrom,
    clearGhosts = false,
  } = options;
  if (!(driftSeconds > 0)) throw new RangeError(`driftSeconds must be > 0, got ${driftSeconds}`);
  if (!(rescaleAfter > 0)) throw new RangeError(`rescaleAfter must be > 0, got ${rescaleAfter}`);
  if (!(updateSeconds >= 0)) throw new RangeError(`updateSeconds must be ≥ 0, got ${updateSeconds}`);
  if (!(Number.isInteger(margin) && margin >= 0)) throw new RangeError(`margin must be a whole number ≥ 0 (pixels), got ${margin}`);
  if (!(maxNoiseScale >= 1)) throw new RangeError(`maxNoiseScale must be ≥ 1, got ${maxNoiseScale}`);
  if (!(maxForegroundShare >= 0 && maxForegroundShare <= 1)) throw new RangeError(`maxForegroundShare must be in 0..1, got ${maxForegroundShare}`);
  const list = zones.length > 0 ? zones : [wholeFrameZone];
  const absorbing = list.some((z) => z.absorbSeconds !== undefined);
  if (!adaptToDrift && !absorbing) {
    const plain = createCounter(model, list, options);
    return {
      ...plain,
      count: (frame, colour) => plain.count(frame, colour),
      lastMask: () => plain.lastMask(),
      model: () => model,
      driftState: () => ({ updates: 0, meanShift: 0, absorbedPixels: 0, rescales: 0, ghostPixels: 0 }),
      ghostRepair: () => noRepair,
    };
  }

  const { width, height } = model;
  const d = width * height;
  const carried = continueFrom === undefined ? undefined : adaptedMeans.get(continueFrom)?.model;
  const fits = carried !== undefined && carried.width === width && carried.height === height && carried.components === model.components;
  // The counter's own model: the mean is updated in place, and so is the basis when it is rescaled
  // (then it is the counter's own copy; the learned one otherwise, shared).
  const rescaling = adaptToDrift && model.components > 0 && rescaleAfter !== Infinity;
  const startBasis = fits ? carried.basis : model.basis;
  const own: Subspace = {
    ...model,
    mean: Float32Array.from(fits ? carried.mean : model.mean),
    basis: (rescaling || fits) && model.components > 0 ? Float32Array.from(startBasis) : model.basis,
  };
  const inner = createCounter(own, list, options);
  const zonesPrepared = inner.zones;
  const stageTimes = new Float64Array(inner.stageTimes.length);
  // The mean at the last rescaling of the basis (the learned one at first).
  const meanAtRescale = Float32Array.from(fits ? carried.mean : model.mean);
  let rescalePending = own.basis === model.basis || (fits && carried.basis !== model.basis) ? false : !sameArray(own.mean, model.mean);

  // Seconds a pixel must stay foreground before it is absorbed (Infinity: never).
  const absorbAfter = new Float32Array(absorbing ? d : 0).fill(Infinity);
  if (absorbing) {
    const members = new Uint8Array(d); // zones containing the pixel
    const allow = new Uint8Array(d); // of which allow absorption
    const longest = new Float32Array(d);
    inner.zones.forEach((prepared, index) => {
      const seconds = list[index].absorbSeconds;
      for (const p of prepared.pixels) {
        members[p]++;
        if (seconds !== undefined) {
          allow[p]++;
          longest[p] = Math.max(longest[p], seconds);
        }
      }
    });
    for (let i = 0; i < d; i++) if (members[i] > 0 && allow[i] === members[i]) absorbAfter[i] = longest[i];
  }
  const foregroundSince = new Float64Array(absorbing ? d : 0).fill(NaN);
  const ghosts = adaptToDrift && clearGhosts !== false;
  const ghostOptions = typeof clearGhosts === 'object' ? clearGhosts : {};
  const absorb = new Uint8Array(absorbing || ghosts ? d : 0);
  // Updates in a row at which the pixel was part of a ghost, and what clearing changed the mean by.
  const ghostRuns = new Uint8Array(ghosts ? d : 0);
  const ghostSeen = new Uint8Array(ghosts ? d : 0);
  const repair = new Float32Array(ghosts ? d : 0);
  const beforeClearing = new Float32Array(ghosts ? d : 0);
  let ghostPixels = 0;

  const near = createMask(width, height);
  const background = createMask(width, height);
  const morphScratch = new Uint8Array(d);
  const scratch = adaptBackgroundScratch(width, height);
  let lastUpdate: number | undefined;
  let updates = 0;
  let absorbedPixels = 0;
  let meanShift = 0;
  let lastRescale: number | undefined;
  let rescales = 0;

  function update(frame: GreyFrame, mask: Mask, blobs: readonly Blob[], noiseScale: number, now: number): void {
    const dt = lastUpdate === undefined ? 0 : Math.min((now - lastUpdate) / 1000, driftSeconds / 2);
    lastUpdate = now;
    const rate = adaptToDrift && dt > 0 ? 1 - Math.exp(-dt / driftSeconds) : 0;
    let absorbNow = 0;
    if (absorb.length > 0) absorb.fill(0);
    if (absorbing) {
      const fg = mask.data;
      for (let i = 0; i < d; i++) {
        if (fg[i] === 0) {
          foregroundSince[i] = NaN;
        } else if (Number.isNaN(foregroundSince[i])) {
          foregroundSince[i] = now;
        } else if (now - foregroundSince[i] >= absorbAfter[i] * 1000) {
          absorb[i] = 1;
          foregroundSince[i] = NaN;
          absorbNow++;
        }
      }
    }
    let ghostNow = 0;
    if (ghosts) {
      ghostNow = markGhosts(frame, mask, blobs);
      absorbNow += ghostNow;
    }
    if (rate === 0 && absorbNow === 0) return;
    dilate(mask, { radius: margin, out: near, scratch: morphScratch });
    for (let i = 0; i < d; i++) background.data[i] = near.data[i] ^ 1;
    // The counter's robust coordinates of this frame (fitted on the pixels its residual explains)
    // stand for adaptBackground's own fit on the background pixels, which would cost a pass.
    const step = adaptBackground(own, frame, background, {
      rate,
      maybeLevel,
      noiseScale,
      ...(absorbNow > 0 && { absorb }),
      coefficients: inner.lastCoefficients(),
      out: own.mean,
      scratch,
    });
    if (!step.applied) return;
    inner.refreshMean();
    updates++;
    absorbedPixels += step.absorbed;
    if (ghostNow > 0) {
      for (let i = 0; i < d; i++) {
        if (ghostRuns[i] >= GHOST_UPDATES) {
          repair[i] += own.mean[i] - beforeClearing[i];
          ghostRuns[i] = 0;
        }
      }
      ghostPixels += ghostNow;
    }
    let shift = 0;
    let change = 0;
    const learned = model.mean;
    const mean = own.mean;
    for (let i = 0; i < d; i++) {
      const m = mean[i];
      const delta = m - learned[i];
      shift += delta * delta;
      const moved = (m - meanAtRescale[i]) / Math.max(8, learned[i]);
      change += moved * moved;
    }
    meanShift = Math.sqrt(shift / d);
    if (rescaling) {
      if (Math.sqrt(change / d) > rescaleAfter && (lastRescale === undefined || now - lastRescale >= driftSeconds * 1000)) {
        rescalePending = true;
        lastRescale = now;
      }
    }
  }

  /**
   * Marks for absorption the pixels that have been part of a ghost blob at GHOST_UPDATES updates
   * in a row (a person passing over the place breaks the run); returns how many.
   */
  function markGhosts(frame: GreyFrame, mask: Mask, blobs: readonly Blob[]): number {
    ghostSeen.fill(0);
    const fg = mask.data;
    for (const ghost of findGhosts(frame, own.mean, mask, blobs, ghostOptions)) {
      for (let y = ghost.y0; y <= ghost.y1; y++) {
        for (let p = y * width + ghost.x0, end = y * width + ghost.x1; p <= end; p++) ghostSeen[p] = fg[p];
      }
    }
    let marked = 0;
    for (let i = 0; i < d; i++) {
      if (ghostSeen[i] === 0) {
        ghostRuns[i] = 0;
      } else if (++ghostRuns[i] >= GHOST_UPDATES) {
        ghostRuns[i] = GHOST_UPDATES;
        absorb[i] = 1;
        beforeClearing[i] = own.mean[i];
        marked++;
      }
    }
    return marked;
  }

  /**
   * The learned eigen-images rescaled to the adapted mean, written over the counter's own basis;
   * the counter then takes them into its coefficient sample and kernel planes (refreshBasis):
   * no new counter and no new memory.
   */
  function rescale(): void {
    rescalePending = false;
    rescales++;
    meanAtRescale.set(own.mean);
    rescaleBasis(model, own.mean, { out: own.basis });
    inner.refreshBasis();
  }

  const counter: DriftingCounter = {
    width,
    height,
    zones: zonesPrepared,
    count(frame, colour) {
      // Before counting, so that lastMask() is always the mask of the last counted frame.
      if (rescalePending) rescale();
      const result = inner.count(frame, colour);
      const times = inner.stageTimes;
      for (let j = 0; j < times.length; j++) {
        stageTimes[j] += times[j];
        times[j] = 0;
      }
      const now = clock();
      const due = lastUpdate === undefined || now - lastUpdate >= updateSeconds * 1000 || now < lastUpdate;
      if (due) {
        const still = result.noiseScale <= maxNoiseScale && result.foregroundShare <= maxForegroundShare;
        if (still) {
          update(frame, inner.lastMask(), result.blobs, Math.max(1, result.noiseScale), now);
        } else {
          // The view changed as a whole: no learning now, and the next update does not make up for the time.
          lastUpdate = now;
        }
      }
      return result;
    },
    lastMask: () => inner.lastMask(),
    get kernelBytes() {
      return inner.kernelBytes;
    },
    stageTimes,
    model: () => own,
    driftState: () => ({ updates, meanShift, absorbedPixels, rescales, ghostPixels }),
    ghostRepair: () => repair,
  };
  adaptedMeans.set(counter, { model: own });
  return counter;
}

/** Updates in a row a pixel must be part of a ghost before it is cleared (two: one look could be a passer-by's moment). */
const GHOST_UPDATES = 2;
const noRepair = new Float32Array(0);

function sameArray(a: Float32Array, b: Float32Array): boolean {
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}
