/**
 * The messages between the main thread and one camera's worker thread (src/counting/cameraHost.ts
 * on the main side, src/counting/cameraWorker.ts in the worker). Only counts, states, timings,
 * committed samples and events, log lines and the empty-scene model cross: never a frame. The
 * last foreground mask is shared through memory (src/counting/sharedMask.ts), not posted.
 */
import type { CameraConfig } from './cameraConfig.ts';
import type { EventInput } from '../domain/event.ts';
import type { Sample } from '../store/samples.ts';
import type { Subspace } from '../vision/subspace.ts';
import type { CameraLive, LearnStatus } from './cameraPipeline.ts';
import type { Zone } from '../domain/zone.ts';
import type { ZoneCalibrationStatus } from './zoneCalibration.ts';
import type { LogFields, LogLevel } from '../domain/log.ts';

/**
 * A fault the worker simulates, for tests of the service and for the soak benchmark (never set
 * from the configuration file). Frame numbers count the frames the worker has handed to its
 * pipeline since it started.
 */
export interface WorkerFault {
  /** After this many frames, throw an uncaught error in the worker (a crash); whole number ≥ 1; default never. */
  readonly crashAfterFrames?: number;
  /** After this many frames, block the worker's thread (as a decoder that never returns would); whole number ≥ 1; default never. */
  readonly blockAfterFrames?: number;
  /** How long the block of `blockAfterFrames` lasts, ms, > 0; default until the worker is terminated. */
  readonly blockMs?: number;
  /** Block the thread this long after every frame, ms, ≥ 0 (a camera whose decoding is slow); default 0. */
  readonly slowFrameMs?: number;
  /** How many worker starts the fault applies to, counted from the first; whole number ≥ 1; default every start. */
  readonly starts?: number;
}

/** What a camera worker is started with (its `workerData`, besides the bootstrap's `module`). */
export interface CameraWorkerData {
  /** The camera, with the zones to count now (they may differ from the configuration file's). */
  readonly camera: CameraConfig;
  /** Version of `camera.zones` (see {@link ZonesMessage}). */
  readonly zonesVersion: number;
  /** The SQLite database the worker opens its own connection to. */
  readonly dbFile: string;
  /** The site's IANA time zone (the store's). */
  readonly timeZone: string;
  /** The model to count with (its arrays in shared memory, see shareModel); undefined: learn from the first `learnSeconds`. */
  readonly model?: Subspace;
  /** The stored id of `model`, if it is stored. */
  readonly modelId?: number;
  /** Models per camera the store keeps after a learned one is stored (config `models.keep`). */
  readonly keepModels: number;
  /** The shared buffer of the last foreground mask (see sharedMask). */
  readonly mask: SharedArrayBuffer;
  /** Post every committed sample and event to the main thread (for MQTT). */
  readonly relayCommits: boolean;
  /** Milliseconds between two heartbeats. */
  readonly heartbeatMs: number;
  readonly fault?: WorkerFault;
}

/** Replace the zones; `version` grows with every change, so the main thread can tell older live states. */
export interface ZonesMessage {
  readonly type: 'zones';
  readonly zones: readonly Zone[];
  readonly version: number;
}

/** Count with this model from now on (an admin chose a kept model; already made active in the store). Its arrays are in shared memory. */
export interface UseModelMessage {
  readonly type: 'model';
  readonly model: Subspace;
  readonly id: number;
}

/** "There are `count` people in room zone `zone` now" (see CameraPipeline.calibrate); answered by a `calibrated` with the same `request`. */
export interface CalibrateMessage {
  readonly type: 'calibrate';
  readonly request: number;
  readonly zone: string;
  readonly count: number;
  readonly by: string;
}

/** Main thread → worker. `calibration`: the zones' calibration points changed in the store (read them again). */
export type ToWorker =
  | ZonesMessage
  | UseModelMessage
  | CalibrateMessage
  | { readonly type: 'calibration' }
  | { readonly type: 'relearn'; readonly seconds: number }
  | { readonly type: 'stop' };

/** Stage timings measured since the last message: [stage label, seconds] pairs. */
export type StageTimes = readonly (readonly [string, number])[];

/** The worker's V8 heap at its last heartbeat (v8.getHeapStatistics() of its isolate), bytes. */
export interface WorkerHeap {
  /** Bytes of live and not yet collected objects on the JavaScript heap (`used_heap_size`). */
  readonly usedBytes: number;
  /** Bytes V8 reserved for the JavaScript heap (`total_heap_size`). */
  readonly totalBytes: number;
  /** Bytes outside the heap held by JavaScript objects, typed-array buffers among them (`external_memory`). */
  readonly externalBytes: number;
}

/** Worker → main thread. Every message also counts as a sign of life. */
export type FromWorker =
  | { readonly type: 'ready' }
  | { readonly type: 'beat'; readonly stages: StageTimes; readonly heap: WorkerHeap }
  | { readonly type: 'live'; readonly live: CameraLive; readonly zonesVersion: number; readonly stages: StageTimes }
  | { readonly type: 'learn'; readonly status: LearnStatus }
  /**
   * The worker counts with this model now: one it learned from the live source and judged usable
   * (already stored), or one the main thread sent (`UseModelMessage`, echoed). Its arrays are in
   * shared memory. A learned model judged poor (rejected) is not posted.
   */
  | { readonly type: 'model'; readonly model: Subspace; readonly id?: number }
  /** A sample the worker's store committed (only with `relayCommits`). */
  | { readonly type: 'sample'; readonly sample: Sample }
  /** An event the worker's store committed (only with `relayCommits`). */
  | { readonly type: 'event'; readonly event: EventInput }
  /**
   * The answer to a CalibrateMessage: the zone's calibration after the point was stored, or why
   * it could not be (`refused`: a CalibrationError, e.g. no recent frame; otherwise a fault).
   */
  | { readonly type: 'calibrated'; readonly request: number; readonly status?: ZoneCalibrationStatus; readonly error?: string; readonly refused?: boolean }
  /** A bad frame or a failed connection of the source. */
  | { readonly type: 'sourceError' }
  /** A log line with its level and fields (src/domain/log.ts); the main thread writes it to the service log. */
  | { readonly type: 'log'; readonly line: string; readonly level?: LogLevel; readonly fields?: LogFields }
  /** The worker has stopped its source and closed its store (answer to `stop`). */
  | { readonly type: 'stopped' };
