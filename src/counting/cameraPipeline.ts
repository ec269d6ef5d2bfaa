import { EventEmitter } from 'node:events';
import type { CameraConfig } from './cameraConfig.ts';
import type { GreyFrame, Mask } from '../domain/frame.ts';
import type { FrameError } from '../frames/FrameError.ts';
import type { ColourFrame } from '../domain/colourFrame.ts';
import type { CameraHandlers, SourceState, StatusDetail } from '../frames/live/cameraSource.ts';
import type { Store } from '../store/index.ts';
import { QualityFlag, type Sample } from '../store/samples.ts';
import { fitChromaticity } from '../vision/fitChromaticity.ts';
import type { Subspace } from '../vision/subspace.ts';
import type { Counter } from './createCounter.ts';
import { createDriftingCounter } from './createDriftingCounter.ts';
import { createBlobFollower, type BlobFollower } from './followBlobs.ts';
import { createPersonSizeReservoir, type PersonSizeSuggestion } from './createPersonSizeReservoir.ts';
import { modelVerdict } from './modelVerdict.ts';
import { learningOutcome, storeModel, type StoredVerdict } from './storeModel.ts';
import { slidingWindow, type SlidingWindow } from './smoothCounts.ts';
import { calibratedTally, zoneCountFeatures } from './calibratedTally.ts';
import type { CountRegression } from './fitCountRegression.ts';
import { CalibrationError, fitStoredCalibration, storedRegressions, zoneShapeKey, type ZoneCalibrationStatus } from './zoneCalibration.ts';
import type { FrameTally } from '../vision/tallyZones.ts';
import type { Zone } from '../domain/zone.ts';
import type { Log } from '../domain/log.ts';

/** What the dashboard and outputs see of one zone right now. */
export interface ZoneLive {
  readonly id: string;
  readonly name: string;
  readonly kind: Zone['kind'];
  /** Smoothed people (rooms) or items (shelves). */
  readonly count: number;
  /** Smoothed foreground share of the zone, 0..1. */
  readonly fill: number;
  readonly capacity?: number;
}

/** What the dashboard and outputs see of one camera right now. */
export interface CameraLive {
  readonly camera: string;
  readonly name: string;
  /** `learning` while the empty scene is being learned; otherwise the source's state. */
  readonly state: SourceState | 'learning' | 'stopped';
  /** True while the view looks changed (counts unreliable). */
  readonly viewChanged: boolean;
  /** Epoch ms of the last frame counted, if any. */
  readonly lastFrameAt?: number;
  readonly reason?: string;
  readonly zones: readonly ZoneLive[];
  /** The person size learned from blobs of people seen alone (numbers only; see createPersonSizeReservoir). */
  readonly personSize?: PersonSizeSuggestion;
  /** The stored id of the model counted with, when it is stored. */
  readonly modelId?: number;
}

/** What became of a model learned from the live source (see CameraPipelineOptions.onModel). */
export interface LearnedModel {
  /** Its stored id; undefined when it could not be stored. */
  readonly id?: number;
  readonly verdict: StoredVerdict;
  /** True: the camera counts with it now. False: rejected ('poor' while the camera had a model), the camera kept its model. */
  readonly active: boolean;
}

export interface CameraPipelineOptions {
  readonly camera: CameraConfig;
  readonly store: Store;
  /** The empty-scene model; without one the pipeline learns from its first `learnSeconds` of frames. */
  readonly model?: Subspace;
  /** The stored id of `model`, if it is stored (shown in `live().modelId`). */
  readonly modelId?: number;
  /**
   * Called when the pipeline has learned a model from the live source, judged it (modelVerdict)
   * and stored it: a usable one ('good', 'fair'; or any when the camera had none) is active and
   * counted with at once, a 'poor' one is stored rejected and the camera keeps its model.
   */
  readonly onModel?: (model: Subspace, learned: LearnedModel) => void;
  /** Models per camera kept in the store after storing a learned one (config `models.keep`), 1..10 000; default 5. */
  readonly keepModels?: number;
  /** Fits a model from learning frames (may take the frames over); injected so the pipeline stays free of learning policy. */
  readonly learn?: (frames: Float32Array[], size: { width: number; height: number }) => Subspace | Promise<Subspace>;
  /** Frame noise scale (median (r/σ)² over its expected value) above which a frame counts as a changed view; default 6. */
  readonly viewChangeScale?: number;
  /** Log lines (never pixels). Default: none. */
  readonly log?: Log;
}

/** Where learning the empty scene from the live source stands. */
export interface LearnStatus {
  /** `done`: the learned model is in use; `rejected`: it was judged not usable and the camera kept its model. */
  readonly state: 'idle' | 'learning' | 'done' | 'rejected' | 'failed';
  /** 0..1 of the requested seconds collected. */
  readonly progress: number;
  readonly seconds?: number;
  readonly startedAt?: number;
  readonly finishedAt?: number;
  /** Why learning failed. */
  readonly error?: string;
  /** The learned model's figures (when done). */
  readonly components?: number;
  readonly retainedVariance?: number;
  readonly frames?: number;
  /** The learned model's verdict (when done or rejected). */
  readonly verdict?: StoredVerdict;
  /** The learned model's stored id (when done or rejected, and it could be stored). */
  readonly modelId?: number;
  /** Why the learned model is poor, in plain words (its first finding), when it is. */
  readonly reason?: string;
}

/**
 * Events: 'live' (CameraLive) after every counted frame and status change; 'learn' (LearnStatus)
 * while learning; 'counted' (seconds the frame took to count) after every counted frame.
 */
export interface CameraPipeline extends EventEmitter {
  readonly handlers: CameraHandlers;
  live(): CameraLive;
  /** The model in use, if any. */
  model(): Subspace | undefined;
  /** The foreground mask of the last counted frame (an internal buffer; copy before keeping), if any. */
  lastMask(): Mask | undefined;
  /** Learns the empty scene again from the next `seconds` of frames; counting goes on with the old model meanwhile. */
  relearn(seconds: number): LearnStatus;
  /**
   * Counts with `model` from the next frame on (an admin's roll-back to a kept model; storing
   * which model is active is the caller's). `id` is its stored id. The model must have the
   * camera's working size.
   */
  useModel(model: Subspace, id?: number): void;
  learnStatus(): LearnStatus;
  /** Replaces the zones; counting continues at once with the new ones. */
  setZones(zones: readonly Zone[]): void;
  /**
   * "There are `count` people in room zone `zone` now": stores the zone's count features of the
   * last counted frame with the count (a calibration point; numbers only), refits the zone's
   * count regression and counts the zone with it from the next frame when it beats the blob rule.
   * Throws CalibrationError when the camera has not counted a frame in the last 15 s, the view
   * looks changed, or the zone is not a room zone of this camera.
   */
  calibrate(zone: string, count: number, by: string): ZoneCalibrationStatus;
  /** Reads the zones' calibration points again (after they were removed elsewhere). */
  reloadCalibration(): void;
  /** Ends the current interval without writing it (used on stop). */
  stop(): void;
}

/** Samples kept in memory while the database cannot be written (a day of 10 zones at one per 10 s). */
const maxBacklog = 86_400;

/** SQLite result codes of a database that cannot be written now but may be later. */
function isStorageFault(error: unknown): boolean {
  const code = (error as { code?: unknown }).code;
  return typeof code === 'string' && /^SQLITE_(FULL|READONLY|IOERR|CANTOPEN|BUSY|LOCKED|PROTOCOL)/.test(code);
}

/** Frames kept in memory while learning from a live source (about 37 MB at 320×240). */
const maxLearningFrames = 480;

interface ZoneAccumulator {
  readonly zone: Zone;
  readonly count: SlidingWindow;
  readonly fill: SlidingWindow;
  smoothedCount: number;
  smoothedFill: number;
  /** Sum of smoothed values in the current interval, and frames summed. */
  sum: number;
  frames: number;
  overCapacity: boolean;
}

/**
 * One camera's live counting: frames from its source → counter → per-zone sliding-window
 * smoothing → one sample per zone every `sampleSeconds` into the store (the mean of the smoothed
 * per-frame values over the interval). An interval ends without a sample when the source goes
 * offline or frames stop for more than two sample periods (at least two minutes), so an outage
 * is a gap, never zeros.
 */
export function createCameraPipeline(options: CameraPipelineOptions): CameraPipeline {
  const { camera, store, onModel, learn, viewChangeScale = 6, keepModels = 5, log = () => {} } = options;
  const { width, height } = camera.source.size;
  const sampleMs = Math.round(camera.sampleSeconds * 1000);
  // Frames further apart than this mean the camera was away: the interval is a gap. Slow sources
  // (a snapshot a minute) still get samples, one per frame.
  const maxGapMs = Math.max(2 * sampleMs, 120_000);
  const emitter = new EventEmitter() as CameraPipeline;
  let model = options.model;
  let modelId = options.model ? options.modelId : undefined;
  let zones = camera.zones;
  /** Colour mode (shadow suppression): the source delivers colour, and a model with colour statistics uses it. */
  const colourMode = camera.source.colour === true;
  /** Capture time of the frame being counted: drift adaptation runs on the frames' time, not the wall clock. */
  let countingAt = 0;
  const makeCounter = (m: Subspace, continueFrom?: Counter): Counter => {
    if (colourMode && m.colour === undefined && continueFrom === undefined) {
      log(`camera ${camera.id}: the model has no colour statistics; counting in grey (shadows count) until the empty scene is learned again`, 'warn');
    }
    return createDriftingCounter(m, zones, {
      threshold: camera.threshold,
      adaptToDrift: camera.adaptToDrift,
      timeStages: true,
      clock: () => countingAt,
      ...(colourMode && m.colour !== undefined && { colourModel: m.colour }),
      ...(continueFrom !== undefined && { continueFrom }),
    });
  };
  let counter: Counter | undefined = model ? makeCounter(model) : undefined;
  // Blobs followed from frame to frame (anonymous, in memory, for seconds): flickers do not
  // count and people walking together keep their count. A new one with each counter and gap.
  let follower: BlobFollower | undefined;
  let countsInColour = colourMode && model?.colour !== undefined;
  let accumulators = makeAccumulators(zones);
  /** Room zones counted by their calibration regression (numbers only, from the store). */
  let regressions = loadRegressions();
  /** The last counted frame's tally by the blob rule (before calibration), and when (wall clock) it was counted. */
  let lastRule: FrameTally | undefined;
  let lastCountedWall = 0;
  const personSizes = createPersonSizeReservoir({ width, height });
  let state: CameraLive['state'] = 'connecting';
  let reason: string | undefined;
  /** Offline since the last `online`: the `connecting` of each retry does not end the outage. */
  let outage = false;
  let lastFrameAt: number | undefined;
  let intervalStart: number | undefined;
  let quality = 0;
  let viewChanged = false;
  const backlog: Sample[] = [];
  let droppedFromBacklog = 0;
  const learning: Float32Array[] = [];
  /** Colour mode: the colour frames of `learning`, index for index. */
  const learningColour: Uint8Array[] = [];
  let learnedSeen = 0;
  let learnStride = 1;
  let learningStart: number | undefined;
  let learnSeconds: number | undefined = model ? undefined : camera.learnSeconds;
  let learnState: LearnStatus = model ? { state: 'idle', progress: 0 } : { state: 'learning', progress: 0, seconds: camera.learnSeconds };

  function loadRegressions(): Map<string, CountRegression> {
    try {
      return storedRegressions(store, camera.id, zones, camera.threshold);
    } catch (error) {
      log(`camera ${camera.id}: could not read calibration (${(error as Error).message}); counting by blob sizes`, 'warn');
      return new Map();
    }
  }

  function makeAccumulators(list: readonly Zone[]): ZoneAccumulator[] {
    return list.map((zone) => ({
      zone,
      count: slidingWindow(camera.smoothing.window, camera.smoothing.method),
      fill: slidingWindow(camera.smoothing.window, camera.smoothing.method),
      smoothedCount: 0,
      smoothedFill: 0,
      sum: 0,
      frames: 0,
      overCapacity: false,
    }));
  }

  function dropInterval(): void {
    intervalStart = undefined;
    quality = 0;
    for (const a of accumulators) {
      a.sum = 0;
      a.frames = 0;
      a.count.reset();
      a.fill.reset();
    }
  }

  function writeInterval(end: number): void {
    if (intervalStart === undefined) return;
    const intervalMs = Math.min(end - intervalStart, 3_600_000);
    if (intervalMs >= 1) {
      const samples = accumulators
        .filter((a) => a.frames > 0)
        .map((a) => ({
          time: end,
          camera: camera.id,
          zone: a.zone.id,
          kind: a.zone.kind === 'shelf' ? ('fill' as const) : ('count' as const),
          value: a.zone.kind === 'shelf' ? Math.min(1, Math.max(0, a.sum / a.frames)) : Math.min(1000, Math.max(0, a.sum / a.frames)),
          intervalMs,
          quality,
        }));
      storeSamples(samples);
    }
    intervalStart = end;
    quality = 0;
    for (const a of accumulators) {
      a.sum = 0;
      a.frames = 0;
    }
  }

  /**
   * Writes samples, first any backlog. When the database cannot be written (disk full, read-only
   * data folder, I/O error), samples wait in a bounded backlog (oldest dropped first) and counting
   * goes on; the next interval tries again, so writes resume when space returns.
   */
  function storeSamples(samples: Sample[]): void {
    const all = backlog.length > 0 ? [...backlog, ...samples] : samples;
    try {
      store.insertSamples(all);
      if (backlog.length > 0) log(`camera ${camera.id}: the database is writable again; stored ${backlog.length} samples from the backlog`);
      backlog.length = 0;
    } catch (error) {
      if (!isStorageFault(error)) {
        // A sample the store refuses (say, of a zone removed meanwhile) must not cost the other
        // zones theirs: each is tried on its own, and only the refused ones are dropped.
        if (samples.length > 1) {
          for (const sample of samples) storeSamples([sample]);
          return;
        }
        log(`camera ${camera.id}: could not store samples (${(error as Error).message})`, 'error');
        // A backlog that was waiting for space is kept; only the new samples were at fault.
        if (backlog.length > 0) storeSamples([]);
        return;
      }
      if (backlog.length === 0) log(`camera ${camera.id}: cannot write the database (${(error as Error).message}); keeping samples in memory`, 'error');
      backlog.splice(0, backlog.length, ...all.slice(-maxBacklog));
      droppedFromBacklog += Math.max(0, all.length - maxBacklog);
    }
  }

  function event(type: Parameters<Store['insertEvent']>[0]['type'], detail: unknown, zone?: string, time?: number): void {
    try {
      store.insertEvent({ camera: camera.id, zone: zone ?? null, type, detail, ...(time !== undefined && { time }) });
    } catch (error) {
      log(`camera ${camera.id}: could not store event ${type} (${(error as Error).message})`, 'error');
    }
  }

  function publish(): void {
    emitter.emit('live', emitter.live());
  }

  function onFrame(frame: GreyFrame, capturedAt: number, colour?: ColourFrame): void {
    if (state === 'stopped') return;
    // The store takes whole epoch ms; a drop folder's capturedAt is a file mtime with a fraction.
    const at = Math.floor(capturedAt);
    if (learnSeconds !== undefined) collectForLearning(frame, at, learnSeconds, colour);
    if (!counter) {
      state = 'learning';
      publish();
      return;
    }
    if (lastFrameAt !== undefined && at - lastFrameAt > maxGapMs) dropInterval();
    if (intervalStart === undefined) {
      const previous = accumulators.reduce((m, a) => Math.max(m, store.lastSample(camera.id, a.zone.id)?.time ?? 0), 0);
      intervalStart = Math.max(at, previous);
    }
    const started = performance.now();
    countingAt = at;
    const plain = countsInColour && colour !== undefined ? counter.count(frame, colour) : counter.count(frame);
    if (follower === undefined || follower.zones !== counter.zones || (lastFrameAt !== undefined && at - lastFrameAt > maxGapMs)) {
      follower = createBlobFollower(counter.zones, { width, height });
    }
    const ruled = { ...plain, ...follower.tally(plain.blobs, plain) };
    lastRule = ruled;
    lastCountedWall = Date.now();
    const result = regressions.size === 0
      ? ruled
      : calibratedTally(ruled, zoneCountFeatures(ruled, counter.lastMask(), counter.zones, regressions), regressions);
    emitter.emit('counted', (performance.now() - started) / 1000, counter.stageTimes);
    lastFrameAt = at;
    state = 'online';
    const changed = result.noiseScale > viewChangeScale;
    if (changed !== viewChanged) {
      viewChanged = changed;
      event(changed ? 'view-changed' : 'view-restored', { noiseScale: Math.round(result.noiseScale * 100) / 100 }, undefined, at);
      log(`camera ${camera.id}: view ${changed ? 'changed (counts marked unreliable)' : 'restored'}`, changed ? 'warn' : 'info');
    }
    if (changed) quality |= QualityFlag.viewChanged;
    else personSizes.observe(ruled, counter.zones);
    for (const a of accumulators) {
      const z = result.zones[a.zone.id];
      a.smoothedCount = a.count.push(z.count);
      a.smoothedFill = a.fill.push(z.fill);
      a.sum += a.zone.kind === 'shelf' ? a.smoothedFill : a.smoothedCount;
      a.frames++;
      const over = a.zone.capacity !== undefined && a.zone.kind === 'room' && a.smoothedCount > a.zone.capacity;
      if (over && !a.overCapacity) event('capacity-exceeded', { count: a.smoothedCount, capacity: a.zone.capacity }, a.zone.id, at);
      a.overCapacity = over;
    }
    if (at - intervalStart >= sampleMs) writeInterval(at);
    publish();
  }

  function collectForLearning(frame: GreyFrame, at: number, seconds: number, colour: ColourFrame | undefined): void {
    learningStart ??= at;
    // Keep at most maxLearningFrames, spread over the whole learning time: when full, drop every
    // other kept frame and keep only every second new one from then on.
    if (learnedSeen++ % learnStride === 0) {
      learning.push(Float32Array.from(frame.data));
      if (colourMode && colour !== undefined) learningColour.push(Uint8Array.from(colour.data));
    }
    if (learning.length >= maxLearningFrames) {
      for (let i = 0, j = 0; i < learning.length; i += 2, j++) learning[j] = learning[i];
      learning.length = Math.ceil(learning.length / 2);
      for (let i = 0, j = 0; i < learningColour.length; i += 2, j++) learningColour[j] = learningColour[i];
      learningColour.length = Math.ceil(learningColour.length / 2);
      learnStride *= 2;
    }
    const progress = Math.min(1, (at - learningStart) / (seconds * 1000));
    learnState = { ...learnState, state: 'learning', progress };
    if (progress < 1 || learning.length < 2 || !learn) {
      emitter.emit('learn', learnState);
      return;
    }
    fitLearned();
  }

  function fitLearned(): void {
    if (!learn) return;
    const frames = learning.splice(0);
    const colourFrames = learningColour.splice(0);
    learnedSeen = 0;
    learnStride = 1;
    learnSeconds = undefined;
    learningStart = undefined;
    learnState = { ...learnState, state: 'learning', progress: 1 };
    const finish = (fitted: Subspace) => {
      if (state === 'stopped') return;
      // Colour mode: the colour statistics of the same frames, robustly (people passing through).
      const learned = colourMode && colourFrames.length === frames.length
        ? { ...fitted, colour: fitChromaticity(colourFrames, { width, height }, { robust: true }) }
        : fitted;
      // Judge before switching: a poor model never replaces a working one; with none, it beats nothing.
      const { level, findings } = modelVerdict(learned);
      const verdict: StoredVerdict = { level, findings: [...findings] };
      const { use, event: type, reason, text } = learningOutcome(verdict, model !== undefined);
      let id: number | undefined;
      try {
        id = storeModel(store, camera.id, learned, 'live source', { verdict, activate: use, rejected: !use, keep: keepModels });
      } catch (error) {
        log(`camera ${camera.id}: could not store the learned model (${(error as Error).message})${use ? '; it is used until the service stops' : ''}`, 'error');
      }
      if (use) {
        model = learned;
        modelId = id;
        counter = makeCounter(model);
        countsInColour = colourMode && model.colour !== undefined;
        // A new empty scene may mean the camera moved: sizes seen before no longer apply.
        personSizes.clear();
      }
      onModel?.(learned, { ...(id !== undefined && { id }), verdict, active: use });
      event(type, { model: id ?? null, level, findings: verdict.findings, ...(reason !== undefined && { reason }), text });
      learnState = {
        ...learnState,
        state: use ? 'done' : 'rejected',
        progress: 1,
        finishedAt: Date.now(),
        components: learned.components,
        retainedVariance: learned.retainedVariance,
        frames: learned.frameCount,
        verdict,
        ...(id !== undefined && { modelId: id }),
        ...(reason !== undefined && { reason }),
      };
      log(
        use
          ? `camera ${camera.id}: learned the empty scene from ${learned.frameCount} frames (${learned.components} components, ${level}${level === 'poor' ? `: ${reason}` : ''})`
          : `camera ${camera.id}: learned a poor model from ${learned.frameCount} frames and kept the one in use (${reason})`,
        use ? 'info' : 'warn',
      );
      emitter.emit('learn', learnState);
      publish();
    };
    const fail = (error: unknown) => {
      learnState = { ...learnState, state: 'failed', finishedAt: Date.now(), error: (error as Error).message };
      log(`camera ${camera.id}: learning failed (${(error as Error).message})`, 'error');
      emitter.emit('learn', learnState);
    };
    try {
      const result = learn(frames, { width, height });
      if (result instanceof Promise) result.then(finish, fail);
      else finish(result);
    } catch (error) {
      fail(error);
    }
  }

  function onStatus(next: SourceState, detail: StatusDetail): void {
    if (state === 'stopped') return;
    const was = state;
    reason = detail.reason;
    if (next === 'offline') {
      dropInterval();
      if (was !== 'offline' && !outage) {
        event('offline', { reason: detail.reason ?? null }, undefined, detail.at);
        log(`camera ${camera.id}: offline${detail.reason ? ` (${detail.reason})` : ''}`, 'warn');
      }
      outage = true;
    } else if (next === 'online' && (was === 'offline' || outage)) {
      outage = false;
      event('online', {}, undefined, detail.at);
      log(`camera ${camera.id}: online`);
    }
    const { previousSourceSize: from, sourceSize: to } = detail;
    if (next === 'online' && from !== undefined && to !== undefined) {
      // The camera's resolution changed, same aspect ratio (see cameraSource.ts): the frames are
      // now resized from another size, so the model may fit less well. Once per change; counting goes on.
      event('view-changed', { reason: 'source size changed', from: { width: from.width, height: from.height }, to: { width: to.width, height: to.height } }, undefined, detail.at);
      log(`camera ${camera.id}: view changed (${detail.reason ?? 'source size changed'}; counts marked unreliable)`, 'warn');
      quality |= QualityFlag.viewChanged;
    }
    if (counter || next !== 'online') state = next;
    publish();
  }

  function onBadFrame(error: FrameError): void {
    log(`camera ${camera.id}: skipped a frame (${error.message})`, 'warn');
  }

  Object.assign(emitter, {
    handlers: { frame: onFrame, status: onStatus, badFrame: onBadFrame } satisfies CameraHandlers,
    live(): CameraLive {
      return {
        camera: camera.id,
        name: camera.name,
        state,
        viewChanged,
        ...(lastFrameAt !== undefined && { lastFrameAt }),
        ...(reason !== undefined && state === 'offline' && { reason }),
        zones: accumulators.map((a) => ({
          id: a.zone.id,
          name: a.zone.name ?? a.zone.id,
          kind: a.zone.kind,
          count: Math.round(a.smoothedCount * 100) / 100,
          fill: Math.round(a.smoothedFill * 10000) / 10000,
          ...(a.zone.capacity !== undefined && { capacity: a.zone.capacity }),
        })),
        personSize: personSizes.suggestion(),
        ...(modelId !== undefined && { modelId }),
      };
    },
    model: () => model,
    lastMask: () => (counter && lastFrameAt !== undefined ? counter.lastMask() : undefined),
    relearn(seconds: number) {
      if (!(seconds > 0 && seconds <= 3600)) throw new RangeError(`seconds must be in (0, 3600], got ${seconds}`);
      if (learnSeconds !== undefined) return learnState;
      learning.length = 0;
      learningColour.length = 0;
      learnedSeen = 0;
      learnStride = 1;
      learningStart = undefined;
      learnSeconds = seconds;
      learnState = { state: 'learning', progress: 0, seconds, startedAt: Date.now() };
      emitter.emit('learn', learnState);
      return learnState;
    },
    learnStatus: () => learnState,
    useModel(next: Subspace, id?: number) {
      if (next.width !== width || next.height !== height) {
        throw new RangeError(`the model is ${next.width}×${next.height} but camera ${camera.id} works at ${width}×${height}`);
      }
      model = next;
      modelId = id;
      counter = makeCounter(model);
      countsInColour = colourMode && model.colour !== undefined;
      personSizes.clear();
      publish();
    },
    setZones(next: readonly Zone[]) {
      if (lastFrameAt !== undefined) writeInterval(lastFrameAt);
      zones = next;
      accumulators = makeAccumulators(zones);
      regressions = loadRegressions();
      lastRule = undefined;
      // The background adapted so far carries over to the new zones.
      if (model) counter = makeCounter(model, counter);
      publish();
    },
    stop() {
      state = 'stopped';
      dropInterval();
    },
    calibrate(zoneId: string, count: number, by: string): ZoneCalibrationStatus {
      const zone = zones.find((z) => z.id === zoneId);
      if (zone === undefined) throw new CalibrationError(`camera ${camera.id} has no zone ${JSON.stringify(zoneId)}`);
      if (zone.kind !== 'room') throw new CalibrationError(`zone ${zoneId} is a shelf zone; only room zones count people`);
      if (!(Number.isInteger(count) && count >= 0 && count <= 10_000)) throw new RangeError(`count must be a whole number from 0 to 10000, got ${count}`);
      if (!counter || lastRule === undefined || Date.now() - lastCountedWall > 15_000) {
        throw new CalibrationError(`camera ${camera.id} has not counted a frame in the last 15 s; try again when it is counting`);
      }
      if (viewChanged) throw new CalibrationError(`camera ${camera.id}: the view looks changed, so what it sees now cannot calibrate counts; learn the empty scene again first`);
      const features = zoneCountFeatures(lastRule, counter.lastMask(), counter.zones, new Set([zoneId])).get(zoneId);
      if (features === undefined) throw new CalibrationError(`zone ${zoneId} was not counted in the last frame; try again`);
      store.insertCalibrationPoint({ camera: camera.id, zone: zoneId, count, features, zoneShape: zoneShapeKey(zone, camera.threshold), givenBy: by });
      const { status, regression } = fitStoredCalibration(store, camera.id, zone, camera.threshold);
      if (regression !== undefined) regressions.set(zoneId, regression);
      else regressions.delete(zoneId);
      event('calibration-added', { count, counted: features[0], by, points: status.points.length, inUse: status.inUse, text: status.text }, zoneId);
      log(`camera ${camera.id}: ${count} people in zone ${zoneId} given by the ${by} (counted ${features[0]}); ${status.text}`, 'info', { zone: zoneId });
      return status;
    },
    reloadCalibration() {
      regressions = loadRegressions();
    },
  });
  return emitter;
}
