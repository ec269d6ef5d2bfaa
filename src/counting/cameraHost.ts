import { EventEmitter } from 'node:events';
import type { Worker } from 'node:worker_threads';
import type { EventLoopUtilization } from 'node:perf_hooks';
import type { CameraConfig } from './cameraConfig.ts';
import type { Mask } from '../domain/frame.ts';
import { createRetryScheduler, type BackoffOptions } from '../frames/live/backoff.ts';
import type { Store } from '../store/index.ts';
import type { Subspace } from '../vision/subspace.ts';
import type { CameraLive, LearnStatus, ZoneLive } from './cameraPipeline.ts';
import type { CameraWorkerData, FromWorker, ToWorker, WorkerFault, WorkerHeap } from './cameraWorkerProtocol.ts';
import { shareModel } from './shareModel.ts';
import { sharedMask } from './sharedMask.ts';
import { startWorker } from './startWorker.ts';
import type { Zone } from '../domain/zone.ts';
import { CalibrationError, type ZoneCalibrationStatus } from './zoneCalibration.ts';
import type { Log } from '../domain/log.ts';

export interface CameraHostOptions {
  /** The camera as configured (its zones are the ones counted at start). */
  readonly camera: CameraConfig;
  /** The SQLite database; the worker opens its own connection to it. */
  readonly dbFile: string;
  /** The site's IANA time zone. */
  readonly timeZone: string;
  /** The model to count with; default none: the worker learns from its first `learnSeconds` of frames. */
  readonly model?: Subspace;
  /** The stored id of `model`, if it is stored. */
  readonly modelId?: number;
  /** Models per camera the store keeps after the worker stored a learned one (config `models.keep`), 1..10 000; default 5. */
  readonly keepModels?: number;
  /** Where the host writes its own events (worker crashed → `offline`, counting again → `online`); the main thread's store. */
  readonly events: Pick<Store, 'insertEvent'>;
  /** Have the worker post each sample and event it committed (`sample`, `event` events, for MQTT); default false. */
  readonly relayCommits?: boolean;
  /** Log lines (the worker's too; never pixels); default none. */
  readonly log?: Log;
  /** Delays before restarting a crashed worker; default 1 s doubling to 60 s, full jitter (see backoff.ts). */
  readonly restartBackoff?: BackoffOptions;
  /** A worker that sent nothing, not even its heartbeat, for this long is taken as hung and restarted, ms; 0 = never; default 30 000 (at least 60 000 while it starts). */
  readonly stallMs?: number;
  /** Milliseconds between the worker's heartbeats, ≥ 10; default 1000. */
  readonly heartbeatMs?: number;
  /** A worker that ran at least this long before it failed restarts after the first backoff window again, ms ≥ 0; default 60 000. */
  readonly stableMs?: number;
  /** How long `stop()` waits for the worker to close its source and store before terminating it, ms ≥ 0; default 5000. */
  readonly stopTimeoutMs?: number;
  /**
   * Largest young generation of the worker's JavaScript heap, MB, ≥ 1; default none (V8's own,
   * which grows it to some 32 MB under a high allocation rate). The worker's frames and buffers
   * are typed arrays outside the heap, so a few MB suffice; a bound keeps the worker's resident
   * memory from swinging with V8's resizing of it.
   */
  readonly youngGenerationMb?: number;
  /** Tests and the soak benchmark only: a fault the worker simulates; default none. */
  readonly fault?: WorkerFault;
}

/**
 * The main thread's side of one camera's worker: it starts the worker, mirrors what the HTTP
 * layer asks synchronously (live state, learning status, model, last mask), forwards zone changes
 * and learning requests, and restarts the worker with backoff when it crashes, exits or hangs.
 *
 * Events: `live` (CameraLive) after every counted frame and state change, as the pipeline's;
 * `learn` (LearnStatus); `stage` (label, seconds); `sample` (Sample) and `event` (EventInput)
 * after the worker's store committed them (with `relayCommits`); `sourceError` (); `model`
 * (Subspace, id) when the worker counts with another model (one it learned and judged usable, or
 * one given to `useModel`); `restart` ({ reason, attempt, retryInMs }) when a worker failed and
 * another is due.
 */
export interface CameraHost extends EventEmitter {
  readonly id: string;
  /** Resolves once the first worker has started its source; rejects (and gives up) when that first start fails. */
  ready(): Promise<void>;
  live(): CameraLive;
  model(): Subspace | undefined;
  /** The stored id of the model counted with, if known. */
  modelId(): number | undefined;
  /**
   * Has the worker count with `model` (stored as `id`, made active in the store by the caller)
   * from its next frame, without a restart; a worker started later starts with it.
   */
  useModel(model: Subspace, id: number): void;
  /** A copy of the last counted frame's foreground mask, if the current worker counted one. */
  lastMask(): Mask | undefined;
  /** As CameraPipeline.relearn; a request made while the worker is down is sent to the next one. */
  relearn(seconds: number): LearnStatus;
  learnStatus(): LearnStatus;
  /** Replaces the zones (the live state shows them at once, with counts from the next frame). */
  setZones(zones: readonly Zone[]): void;
  /**
   * As CameraPipeline.calibrate, in the worker: resolves with the zone's calibration after the
   * point was stored; rejects with a CalibrationError when the camera refuses it (no recent frame,
   * view changed, not a room zone) or is not running, or an Error when it does not answer in 5 s.
   */
  calibrate(zone: string, count: number, by: string): Promise<ZoneCalibrationStatus>;
  /** Tells the worker that calibration points changed in the store (e.g. removed). */
  calibrationChanged(): void;
  zones(): readonly Zone[];
  /** Share of wall time the worker's event loop was busy since the previous call (or its start), 0..1; 0 without a worker. */
  utilization(): number;
  /** The current worker's heap at its last heartbeat; undefined before its first or without a worker. */
  heap(): WorkerHeap | undefined;
  /** Workers started after a failure so far. */
  readonly restarts: number;
  /** Whether a worker is running now. */
  readonly running: boolean;
  /** Stops the worker (source, pipeline, store closed) and any restart; resolves when the thread is gone. */
  stop(): Promise<void>;
}

/** How long a starting worker may take to say it is ready before the watchdog (if on) gives up on it, ms. */
const STARTUP_MS = 60_000;

/** Starts the camera's worker at once. */
export function createCameraHost(options: CameraHostOptions): CameraHost {
  const {
    camera,
    dbFile,
    timeZone,
    events,
    relayCommits = false,
    log = () => {},
    restartBackoff = {},
    stallMs = 30_000,
    heartbeatMs = 1000,
    stableMs = 60_000,
    stopTimeoutMs = 5000,
    youngGenerationMb,
    keepModels = 5,
    fault,
  } = options;
  if (youngGenerationMb !== undefined && !(Number.isFinite(youngGenerationMb) && youngGenerationMb >= 1)) throw new RangeError(`youngGenerationMb: expected MB ≥ 1, got ${String(youngGenerationMb)}`);
  if (!(Number.isFinite(stallMs) && stallMs >= 0)) throw new RangeError(`stallMs: expected milliseconds ≥ 0, got ${String(stallMs)}`);
  if (!(Number.isFinite(heartbeatMs) && heartbeatMs >= 10)) throw new RangeError(`heartbeatMs: expected milliseconds ≥ 10, got ${String(heartbeatMs)}`);
  if (stallMs > 0 && stallMs < 2 * heartbeatMs) throw new RangeError(`stallMs: expected 0 or at least two heartbeats (${2 * heartbeatMs} ms), got ${stallMs}`);
  if (!(Number.isInteger(keepModels) && keepModels >= 1 && keepModels <= 10_000)) throw new RangeError(`keepModels: expected a whole number from 1 to 10 000, got ${String(keepModels)}`);
  if (!(Number.isFinite(stableMs) && stableMs >= 0)) throw new RangeError(`stableMs: expected milliseconds ≥ 0, got ${String(stableMs)}`);
  if (!(Number.isFinite(stopTimeoutMs) && stopTimeoutMs >= 0)) throw new RangeError(`stopTimeoutMs: expected milliseconds ≥ 0, got ${String(stopTimeoutMs)}`);
  const id = camera.id;
  const host = new EventEmitter() as CameraHost;
  const retry = createRetryScheduler(restartBackoff);
  const mask = sharedMask(camera.source.size);
  let model = options.model && shareModel(options.model);
  let modelId = model ? options.modelId : undefined;
  let zones = camera.zones;
  let zonesVersion = 0;
  let live: CameraLive = { camera: id, name: camera.name, state: 'connecting', viewChanged: false, zones: zonesLive(zones) };
  let learnState: LearnStatus = model ? { state: 'idle', progress: 0 } : { state: 'learning', progress: 0, seconds: camera.learnSeconds };
  /** Calibration requests waiting for the worker's answer, by request number. */
  const calibrations = new Map<number, { resolve: (status: ZoneCalibrationStatus) => void; reject: (error: Error) => void; timer: NodeJS.Timeout }>();
  let calibrationRequests = 0;
  /** Seconds of a learning request not yet finished, sent again to a restarted worker. */
  let pendingRelearn: number | undefined;
  let worker: Worker | undefined;
  let workerReady = false;
  let starts = 0;
  let restarts = 0;
  let startedAt = 0;
  let lastMessageAt = 0;
  let failure: string | undefined;
  let watchdog: NodeJS.Timeout | undefined;
  let elu: EventLoopUtilization | undefined;
  let heap: WorkerHeap | undefined;
  /** True after the host wrote `offline` for a failed worker, until the camera counts again. */
  let offlineWritten = false;
  let stopping = false;
  let stopPromise: Promise<void> | undefined;
  /** Resolves the wait of stop() for the worker's `stopped`. */
  let stopped: (() => void) | undefined;
  let firstReady: { resolve: () => void; reject: (error: Error) => void } | undefined;
  const readyPromise = new Promise<void>((resolve, reject) => {
    firstReady = { resolve, reject };
  });
  readyPromise.catch(() => {}); // rejections are for whoever awaits ready()

  function send(message: ToWorker): void {
    worker?.postMessage(message);
  }

  function event(type: 'offline' | 'online', detail: unknown): void {
    try {
      events.insertEvent({ camera: id, type, detail });
    } catch (error) {
      log(`camera ${id}: could not store event ${type} (${(error as Error).message})`, 'error');
    }
  }

  function launch(): void {
    const data: CameraWorkerData = {
      camera: { ...camera, zones },
      zonesVersion,
      dbFile,
      timeZone,
      ...(model && { model }),
      ...(model && modelId !== undefined && { modelId }),
      keepModels,
      mask: mask.buffer,
      relayCommits,
      heartbeatMs,
      ...(fault && starts < (fault.starts ?? Infinity) && { fault }),
    };
    starts++;
    mask.clear();
    failure = undefined;
    workerReady = false;
    elu = undefined;
    heap = undefined;
    startedAt = lastMessageAt = Date.now();
    let w: Worker;
    try {
      w = startWorker('cameraWorker', {
        workerData: data,
        ...(youngGenerationMb !== undefined && { resourceLimits: { maxYoungGenerationSizeMb: youngGenerationMb } }),
      });
    } catch (error) {
      failed(`could not be started (${(error as Error).message})`);
      return;
    }
    worker = w;
    w.on('message', (message: FromWorker) => {
      if (worker === w) onMessage(message);
    });
    w.on('error', (error: unknown) => {
      failure ??= `crashed (${error instanceof Error ? error.message : String(error)})`;
    });
    w.on('messageerror', (error) => log(`camera ${id}: a message from its worker could not be read (${error.message})`, 'error'));
    w.on('exit', (code) => onExit(w, code));
    if (stallMs > 0) {
      watchdog = setInterval(() => {
        const silent = Date.now() - lastMessageAt;
        // Starting (loading the modules, through tsx without a bundle) may take a while on a busy machine.
        const limit = workerReady ? stallMs : Math.max(stallMs, STARTUP_MS);
        if (worker !== w || silent <= limit || failure !== undefined) return;
        failure = `unresponsive for ${Math.round(silent / 1000)} s`;
        void w.terminate();
      }, Math.min(heartbeatMs, stallMs / 2));
      watchdog.unref();
    }
  }

  function onMessage(message: FromWorker): void {
    lastMessageAt = Date.now();
    switch (message.type) {
      case 'ready':
        workerReady = true;
        if (pendingRelearn !== undefined) send({ type: 'relearn', seconds: pendingRelearn });
        firstReady?.resolve();
        firstReady = undefined;
        break;
      case 'beat':
        stages(message.stages);
        heap = message.heap;
        break;
      case 'live': {
        stages(message.stages);
        // A state from before the latest zone change keeps the zones the host shows already.
        live = message.zonesVersion < zonesVersion ? { ...message.live, zones: live.zones } : message.live;
        if (offlineWritten && live.state === 'online') {
          offlineWritten = false;
          event('online', { after: 'worker restart' });
          log(`camera ${id}: counting again after its worker was restarted`);
        } else if (offlineWritten && live.state === 'offline') {
          offlineWritten = false; // the pipeline wrote its own offline event and will write online
        }
        host.emit('live', live);
        break;
      }
      case 'learn':
        learnState = message.status;
        if (learnState.state !== 'learning') pendingRelearn = undefined;
        host.emit('learn', learnState);
        break;
      case 'model':
        model = message.model;
        modelId = message.id;
        host.emit('model', model, modelId);
        break;
      case 'sample':
        host.emit('sample', message.sample);
        break;
      case 'event':
        host.emit('event', message.event);
        break;
      case 'calibrated': {
        const waiting = calibrations.get(message.request);
        if (waiting === undefined) break;
        calibrations.delete(message.request);
        clearTimeout(waiting.timer);
        if (message.status !== undefined) waiting.resolve(message.status);
        else if (message.refused) waiting.reject(new CalibrationError(message.error ?? 'refused'));
        else waiting.reject(new Error(message.error ?? 'calibration failed'));
        break;
      }
      case 'sourceError':
        host.emit('sourceError');
        break;
      case 'log':
        log(message.line, message.level, message.fields);
        break;
      case 'stopped':
        stopped?.();
        break;
      default: {
        const unknown: never = message;
        log(`camera ${id}: unknown message ${JSON.stringify((unknown as { type: unknown }).type)} from its worker`, 'warn');
      }
    }
  }

  function stages(list: readonly (readonly [string, number])[]): void {
    for (const [label, seconds] of list) host.emit('stage', label, seconds);
  }

  function onExit(w: Worker, code: number): void {
    if (worker !== w) return;
    worker = undefined;
    workerReady = false;
    for (const [request, waiting] of calibrations) {
      calibrations.delete(request);
      clearTimeout(waiting.timer);
      waiting.reject(new Error(`camera ${id}: its worker stopped before it answered`));
    }
    clearInterval(watchdog);
    watchdog = undefined;
    if (stopping) return;
    failed(failure ?? `stopped (exit code ${code})`);
  }

  /** The worker is gone (or could not be made) without being asked to stop: report it, restart it later. */
  function failed(reason: string): void {
    if (firstReady) {
      // The very first start failed: a configuration the worker cannot run (reported by startService).
      firstReady.reject(new Error(`camera ${id}: its worker could not start: ${reason}`));
      firstReady = undefined;
      stopping = true;
      return;
    }
    if (Date.now() - startedAt >= stableMs) retry.reset();
    const { attempt, retryInMs } = retry.schedule(() => {
      restarts++;
      launch();
    });
    log(`camera ${id}: its worker ${reason}; restarting it in ${(retryInMs / 1000).toFixed(1)} s (attempt ${attempt}); the other cameras keep counting`, 'error');
    const why = `worker ${reason}`;
    if (live.state !== 'offline') {
      event('offline', { reason: why });
      offlineWritten = true;
    }
    live = { ...live, state: 'offline', reason: why };
    host.emit('live', live);
    host.emit('restart', { reason, attempt, retryInMs });
  }

  Object.assign(host, {
    id,
    ready: () => readyPromise,
    live: () => live,
    model: () => model,
    modelId: () => modelId,
    useModel(next: Subspace, id: number) {
      const { width, height } = camera.source.size;
      if (next.width !== width || next.height !== height) throw new RangeError(`the model is ${next.width}×${next.height} but camera ${camera.id} works at ${width}×${height}`);
      model = shareModel(next);
      modelId = id;
      send({ type: 'model', model, id });
      host.emit('model', model, modelId);
    },
    lastMask: () => (worker ? mask.read() : undefined),
    relearn(seconds: number): LearnStatus {
      if (!(seconds > 0 && seconds <= 3600)) throw new RangeError(`seconds must be in (0, 3600], got ${seconds}`);
      if (learnState.state === 'learning') return learnState;
      learnState = { state: 'learning', progress: 0, seconds, startedAt: Date.now() };
      pendingRelearn = seconds;
      if (workerReady) send({ type: 'relearn', seconds });
      host.emit('learn', learnState);
      return learnState;
    },
    learnStatus: () => learnState,
    setZones(next: readonly Zone[]) {
      zones = next;
      zonesVersion++;
      send({ type: 'zones', zones, version: zonesVersion });
      live = { ...live, zones: zonesLive(zones) };
      host.emit('live', live);
    },
    zones: () => zones,
    calibrate(zone: string, count: number, by: string): Promise<ZoneCalibrationStatus> {
      if (!workerReady) return Promise.reject(new CalibrationError(`camera ${id} is not running now; try again when it is counting`));
      const request = ++calibrationRequests;
      return new Promise<ZoneCalibrationStatus>((resolve, reject) => {
        const timer = setTimeout(() => {
          calibrations.delete(request);
          reject(new Error(`camera ${id} did not answer within 5 s`));
        }, 5000);
        calibrations.set(request, { resolve, reject, timer });
        send({ type: 'calibrate', request, zone, count, by });
      });
    },
    calibrationChanged() {
      send({ type: 'calibration' });
    },
    utilization(): number {
      if (!worker) return 0;
      const now = worker.performance.eventLoopUtilization();
      const since = elu ? worker.performance.eventLoopUtilization(now, elu) : now;
      elu = now;
      return Number.isFinite(since.utilization) ? since.utilization : 0;
    },
    heap: () => (worker ? heap : undefined),
    stop() {
      stopPromise ??= stopWorker();
      return stopPromise;
    },
  });

  async function stopWorker(): Promise<void> {
    stopping = true;
    retry.cancel();
    firstReady?.reject(new Error(`camera ${id}: stopped before its worker started`));
    firstReady = undefined;
    const w = worker;
    if (w) {
      // A worker that has been silent for three heartbeats will not answer: terminate at once.
      if (Date.now() - lastMessageAt <= 3 * heartbeatMs && stopTimeoutMs > 0) {
        let timer: NodeJS.Timeout | undefined;
        await new Promise<void>((done) => {
          stopped = done;
          w.once('exit', () => done());
          timer = setTimeout(done, stopTimeoutMs);
          w.postMessage({ type: 'stop' } satisfies ToWorker);
        });
        clearTimeout(timer);
        stopped = undefined;
      }
      await w.terminate();
    }
    clearInterval(watchdog);
    watchdog = undefined;
    live = { ...live, state: 'stopped' };
  }
  Object.defineProperties(host, {
    restarts: { get: () => restarts, enumerable: true },
    running: { get: () => worker !== undefined, enumerable: true },
  });
  launch();
  return host;
}

/** The live zones before anything was counted with them (as the pipeline shows them). */
function zonesLive(zones: readonly Zone[]): ZoneLive[] {
  return zones.map((z) => ({ id: z.id, name: z.name ?? z.id, kind: z.kind, count: 0, fill: 0, ...(z.capacity !== undefined && { capacity: z.capacity }) }));
}
