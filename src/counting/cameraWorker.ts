/**
 * One camera in its own worker thread (started by src/counting/cameraHost.ts through
 * workerBootstrap.mjs): the live source (connections, JPEG decoding, ffmpeg's pipe), the counting
 * pipeline (createCameraPipeline: counter, smoothing, sampling, events, learning) and the writes
 * of its samples, events and learned models, through the worker's own SQLite connection (WAL
 * with busy_timeout, so the workers and the main thread may all write the one database). A slow
 * or stuck camera therefore holds up only its own thread.
 *
 * To the main thread it posts live states, learning progress, stage timings, log lines, a
 * heartbeat, and — for MQTT — each sample and event after its commit (see
 * cameraWorkerProtocol.ts). Frames stay in this thread; the last foreground mask is copied into
 * shared memory for the admin's coarse preview.
 *
 * Not imported by anything but the bootstrap: importing it starts the camera.
 */
import { getHeapStatistics } from 'node:v8';
import { parentPort, workerData } from 'node:worker_threads';
import { createCameraSource } from '../frames/live/createCameraSource.ts';
import { reportingStore } from '../store/reportingStore.ts';
import { openStore, type Store } from '../store/index.ts';
import { createCameraPipeline } from './cameraPipeline.ts';
import { counterStageDeltas } from './counterStageDeltas.ts';
import type { CameraWorkerData, FromWorker, ToWorker, WorkerHeap } from './cameraWorkerProtocol.ts';
import { learnInWorker, liveLearning } from './learnInWorker.ts';
import { shareModel } from './shareModel.ts';
import { sharedMask } from './sharedMask.ts';
import { CalibrationError } from './zoneCalibration.ts';
import type { Log } from '../domain/log.ts';

const data = workerData as CameraWorkerData;
const port = parentPort!;
const { camera, fault } = data;
const post = (message: FromWorker) => port.postMessage(message);
// Lines go to the main thread, which writes them to the one service log (no logger in this thread).
const log: Log = (line, level, fields) => post({ type: 'log', line, ...(level !== undefined && { level }), ...(fields !== undefined && { fields }) });

/** Stage timings not yet posted: [label, seconds]. Posted with the next live state or heartbeat. */
let stages: [string, number][] = [];
const stage = (label: string, seconds: number) => {
  if (stages.length < 10_000) stages.push([label, seconds]);
};
const takeStages = () => {
  const taken = stages;
  stages = [];
  return taken;
};

/**
 * FORWARDING POINT for the counter's own stage times (residual, noise_scale, threshold,
 * morphology, labelling, zones: COUNTER_STAGES of createMaskCounter.ts). A counter made with
 * `timeStages: true` adds each stage's milliseconds to its `stageTimes`; cameraPipeline emits
 * `'counted'` with the seconds of the whole count only. Once it makes its counters with
 * `timeStages: true` and passes `counter.stageTimes` as the event's second argument
 * (`emit('counted', seconds, counter.stageTimes)`), this turns the growth of those sums since the
 * previous frame into `residuum_stage_seconds{stage="residual"|…}`, with no other change.
 */
let lastStageSums: { array: Float64Array; sums: Float64Array } | undefined;
function forwardCounterStages(stageTimes: Float64Array | undefined): void {
  if (!(stageTimes instanceof Float64Array)) return;
  // A new counter (new zones, new model) has sums of its own, from 0.
  const previous = lastStageSums?.array === stageTimes ? lastStageSums.sums : undefined;
  for (const [label, seconds] of counterStageDeltas(stageTimes, previous)) stage(label, seconds);
  if (previous) previous.set(stageTimes);
  else lastStageSums = { array: stageTimes, sums: Float64Array.from(stageTimes) };
}

const ownStore = openStore(data.dbFile, { timeZone: data.timeZone });
/** The store with its sample writes timed (stage `store`: one batch, one transaction). */
const timedStore: Store = {
  ...ownStore,
  insertSamples(samples) {
    const started = performance.now();
    try {
      return ownStore.insertSamples(samples);
    } finally {
      stage('store', (performance.now() - started) / 1000);
    }
  },
};
// For MQTT: what the store committed goes to the main thread, which publishes it (the database first, always).
const store = data.relayCommits
  ? reportingStore(timedStore, { publishSample: (sample) => post({ type: 'sample', sample }), publishEvent: (event) => post({ type: 'event', event }) }, log)
  : timedStore;

const mask = sharedMask(camera.source.size, { buffer: data.mask });
let zonesVersion = data.zonesVersion;
let lastMaskAt: number | undefined;

const pipeline = createCameraPipeline({
  camera,
  store,
  ...(data.model && { model: data.model }),
  ...(data.modelId !== undefined && { modelId: data.modelId }),
  keepModels: data.keepModels,
  // Rooms are rarely quite empty: learning from the live view rejects people passing through
  // (liveLearning: robust). The model comes back in shared memory, so the main thread's copy costs nothing.
  learn: async (frames, size) => shareModel(await learnInWorker(frames, size, liveLearning)),
  // The pipeline judged and stored it; the main thread mirrors only a model counted with.
  onModel(model, learned) {
    if (learned.active) post({ type: 'model', model, ...(learned.id !== undefined && { id: learned.id }) });
  },
  log,
});
pipeline.on('counted', (seconds: number, stageTimes?: Float64Array) => {
  stage('count', seconds);
  forwardCounterStages(stageTimes);
});
pipeline.on('live', (live) => {
  if (live.lastFrameAt !== undefined && live.lastFrameAt !== lastMaskAt) {
    lastMaskAt = live.lastFrameAt;
    const last = pipeline.lastMask();
    if (last && last.width === mask.width && last.height === mask.height) mask.write(last);
  }
  post({ type: 'live', live, zonesVersion, stages: takeStages() });
});
pipeline.on('learn', (status) => post({ type: 'learn', status }));

// Sources whose capture time is taken before their own work on the frame: the time from capture
// to the pipeline is that work (decoding, with the download for snapshots; rendering for the
// synthetic scene). A drop folder's capture time is the file's mtime, and ffmpeg decodes in its
// own process before the bytes arrive, so theirs would measure something else.
const timesSource = camera.source.kind === 'mjpeg' || camera.source.kind === 'snapshot' || camera.source.kind === 'synthetic';
const sleep = (ms: number) => Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, ms);
let handed = 0;

/** The simulated fault (tests and soak only), after each frame. */
function afterFrame(): void {
  handed++;
  if (!fault) return;
  if (fault.slowFrameMs) sleep(fault.slowFrameMs);
  if (handed === fault.crashAfterFrames) {
    setImmediate(() => {
      throw new Error(`simulated crash after ${handed} frames`);
    });
  }
  if (handed === fault.blockAfterFrames) {
    log(`camera ${camera.id}: simulated fault: blocking the thread${fault.blockMs ? ` for ${fault.blockMs} ms` : ''}`, 'warn');
    sleep(fault.blockMs ?? Infinity);
  }
}

const source = createCameraSource(camera.source);
let stopping = false;

port.on('message', (message: ToWorker) => {
  try {
    switch (message.type) {
      case 'zones':
        zonesVersion = message.version;
        pipeline.setZones(message.zones);
        break;
      case 'relearn':
        pipeline.relearn(message.seconds);
        break;
      case 'model':
        pipeline.useModel(message.model, message.id);
        post({ type: 'model', model: message.model, id: message.id });
        log(`camera ${camera.id}: counting with model ${message.id} now`);
        break;
      case 'calibrate':
        try {
          post({ type: 'calibrated', request: message.request, status: pipeline.calibrate(message.zone, message.count, message.by) });
        } catch (error) {
          post({ type: 'calibrated', request: message.request, error: (error as Error).message, refused: error instanceof CalibrationError || error instanceof RangeError });
        }
        break;
      case 'calibration':
        pipeline.reloadCalibration();
        break;
      case 'stop':
        void stop();
        break;
      default: {
        const unknown: never = message;
        log(`camera ${camera.id}: unknown message ${JSON.stringify((unknown as { type: unknown }).type)} from the main thread`, 'warn');
      }
    }
  } catch (error) {
    log(`camera ${camera.id}: ${message.type} failed (${(error as Error).message})`, 'error');
  }
});

/** This thread's heap now (its own isolate's, not the process's). */
function heapNow(): WorkerHeap {
  const heap = getHeapStatistics();
  return { usedBytes: heap.used_heap_size, totalBytes: heap.total_heap_size, externalBytes: heap.external_memory };
}

const heartbeat = setInterval(() => post({ type: 'beat', stages: takeStages(), heap: heapNow() }), data.heartbeatMs);

source.start({
  ...pipeline.handlers,
  frame(frame, capturedAt) {
    if (stopping) return;
    if (timesSource) stage('source', Math.max(0, Date.now() - capturedAt) / 1000);
    const started = performance.now();
    pipeline.handlers.frame(frame, capturedAt);
    stage('frame', (performance.now() - started) / 1000);
    afterFrame();
  },
  badFrame(error) {
    post({ type: 'sourceError' });
    pipeline.handlers.badFrame(error);
  },
  status(state, detail) {
    if (state === 'offline') post({ type: 'sourceError' });
    pipeline.handlers.status(state, detail);
  },
});
post({ type: 'ready' });

/** Stops the source (sockets, ffmpeg, timers), ends the interval without writing it, closes the store. */
async function stop(): Promise<void> {
  if (stopping) return;
  stopping = true;
  clearInterval(heartbeat);
  try {
    await source.stop();
  } catch (error) {
    log(`camera ${camera.id}: stopping the source failed (${(error as Error).message})`, 'warn');
  }
  pipeline.stop();
  ownStore.close();
  post({ type: 'beat', stages: takeStages(), heap: heapNow() });
  post({ type: 'stopped' });
}
