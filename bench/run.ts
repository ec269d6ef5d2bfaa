/**
 * The speed benchmark: `npm run bench` prints a report, `npm run bench -- --json` one JSON object.
 *
 * What is measured, all on the synthetic reading room (our own invented scene, no real people) at
 * 320×240, with a model of 8 components learned on 200 empty frames spread over the lighting
 * cycle (`emptyFrameAt(i * 15)`), and the scene's zones:
 *
 * - `pipeline_ms`: `createCounter(model, zones).count(frame)` per frame (residual, noise scale,
 *   threshold, opening and closing, labelling, zones), median over the timed frames;
 * - `mog2_ms`: opencv.js `BackgroundSubtractorMOG2.apply` (OpenCV's defaults: history 500,
 *   varThreshold 16, shadow detection on) on the same frames as 8-bit Mats, median, timed in the
 *   same loop, interleaved frame by frame with the pipeline (the order alternates per frame);
 *   the Float32 → 8-bit copy into the Mat is not timed. `mog2_noshadow_ms` is the same without
 *   shadow detection, the cheaper setting;
 * - `stages`: the same stages called one by one with the counter's defaults and buffers, medians;
 * - `decode_ms`: a 640×480 JPEG (a reading-room frame encoded in memory, quality 85) to a grey
 *   320×240 working frame through `decodeImage`, median; libvips runs on one thread
 *   (`sharp.concurrency(1)`) so that the figure is one core's;
 * - `learn_ms`: `fitSubspace` on the 200 learning frames, median of a few runs;
 * - `rss_mb`: resident memory per camera. A child process (run with --expose-gc) receives one
 *   model, collects garbage and reads its RSS; then creates `cameras` cameras, each with its own
 *   copy of the model (as if loaded from its file) and its own counter, and counts 30 frames on
 *   each; collects garbage again and reads the RSS. rss_mb = growth / cameras. `model_mb` and
 *   `buffers_mb` are the byte sizes of the model's arrays and of the counter's own buffers (its
 *   JS arrays and the WebAssembly memory of its kernels).
 *
 * - `pipeline_ms_k24`: the same counter with a 24-component model (the most a model may have),
 *   timed in the same interleaved loop as `pipeline_ms` and `mog2_ms`;
 * - `learn_1000_ms`: `fitSubspace` with its defaults on 1000 frames at 320×240 (the reading room
 *   every 3rd frame; randomized decomposition), the faster of two runs; `learn_1000_cpu_ms` its
 *   CPU time, less disturbed by other processes;
 * - `service_frame_ms`: one camera as the service's worker runs it (createCameraPipeline with a
 *   real store: the drifting counter with its background updates once a second and its rescales,
 *   blob following, smoothing, samples), fed 600 frames at 2 frames per second of scene time (five
 *   minutes) of the reading room under a slow drift; the mean per frame, so the updates' share
 *   is in it (`service_updates`, `service_rescales` say how many there were);
 * - `camera_rss_mb`, `service_rss_mb`, `cameras_2fps_per_core`: the real service (startService,
 *   one worker thread per camera) in a child process with 1, 4 and 16 snapshot cameras polling
 *   this process for 640×480 JPEGs every 500 ms. `service_rss_mb` is the child's resident memory
 *   after 20 s; `camera_rss_mb` what each camera beyond the first adds (16 against 1);
 *   `cameras_2fps_per_core` = 1 ÷ the CPU time (all threads: fetching, decoding, counting,
 *   storage, HTTP) per camera-second at 2 frames per second, over 30 s of the 16-camera run.
 *
 * Frames are rendered (and converted to 8-bit for opencv.js) before timing, so that rendering
 * costs nothing in the timed loop. Nothing is written to disk but the temporary databases of the
 * service runs, removed afterwards.
 */
import { fork } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import os from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import sharp from 'sharp';
import { startService } from '../src/commands/run.ts';
import type { CameraConfig, ResiduumConfig } from '../src/config/loadConfig.ts';
import { createCameraPipeline } from '../src/counting/cameraPipeline.ts';
import { storeModel } from '../src/counting/storeModel.ts';
import { createReadingRoom } from '../src/frames/synthetic/readingRoom.ts';
import { withSlowDrift } from '../src/frames/synthetic/slowDrift.ts';
import { openStore } from '../src/store/index.ts';
import { createCounter } from '../src/counting/createCounter.ts';
import { createDriftingCounter } from '../src/counting/createDriftingCounter.ts';
import { decodeImage } from '../src/frames/decodeImage.ts';
import type { GreyFrame } from '../src/domain/frame.ts';
import { createScene } from '../src/frames/synthetic/index.ts';
import { fitSubspace } from '../src/vision/fitSubspace.ts';
import type { Subspace } from '../src/vision/subspace.ts';
import { loadOpenCv } from '../src/vision/loadOpenCv.ts';

const WIDTH = 320;
const HEIGHT = 240;
const COMPONENTS = 8;
const LEARNING_FRAMES = 200;
/** Distinct frames with people, every 10th of the scene (t = 0, 10, …). */
const TIMED_FRAMES = 300;
/** Passes over the timed frames: each frame is timed this many times. */
const ROUNDS = 2;
const WARMUP_FRAMES = 60;
const DECODE_RUNS = 150;
const LEARN_RUNS = 3;
const RSS_CAMERAS = 4;
/** Components of the second counter timed against MOG2 (`pipeline_ms_k24`): the most a model may have. */
const MANY_COMPONENTS = 24;
/** Frames of `learn_1000_ms`, spread over the reading room's lighting cycle. */
const MANY_LEARNING_FRAMES = 1000;
/** Frames of the service camera (`service_frame_ms`): five minutes at 2 frames per second. */
const SERVICE_FRAMES = 600;
/** Camera counts of the real service runs (`camera_rss_mb`, `cameras_2fps_per_core`). */
const SERVICE_CAMERAS = [1, 4, 16];
/** Seconds of each real service run before measuring (workers started, models loaded, warm), and measured. */
const SERVICE_WARMUP_S = 20;
const SERVICE_MEASURE_S = 30;

/** The targets of the speed issue, at 320×240 with 8 components. */
const targets = {
  /** pipeline_ms / mog2_ms at most this. */
  ratio: 0.5,
  /** fitSubspace on 200 frames at most this, ms. */
  learnMs: 2000,
  /** decode plus pipeline at least this many frames per second on one core. */
  fps: 60,
  /** service_frame_ms / mog2_ms at most this. */
  serviceRatio: 0.5,
  /** pipeline_ms_k24 / mog2_ms at most this. */
  k24Ratio: 1,
  /** learn_1000_ms at most this. */
  learn1000Ms: 2000,
  /** camera_rss_mb at most this. */
  cameraRssMb: 40,
  /** cameras_2fps_per_core × cores at least this. */
  cameras: 100,
};

interface BenchResult {
  width: number;
  height: number;
  components: number;
  frames: number;
  pipeline_ms: number;
  pipeline_p90_ms: number;
  mog2_ms: number;
  mog2_noshadow_ms: number;
  ratio: number;
  ratio_noshadow: number;
  stages: { residual_ms: number; noise_scale_ms: number; threshold_ms: number; morphology_ms: number; labelling_ms: number; zones_ms: number };
  decode_ms: number;
  fps: number;
  learn_ms: number;
  rss_mb: number;
  model_mb: number;
  buffers_mb: number;
  scaling: { pixels: Record<string, number>; components: Record<string, number> };
  service_frame_ms: number;
  service_frame_p90_ms: number;
  service_updates: number;
  service_rescales: number;
  pipeline_ms_k24: number;
  learn_1000_ms: number;
  learn_1000_cpu_ms: number;
  camera_rss_mb: number;
  service_rss_mb: Record<string, number>;
  cameras_2fps_per_core: number;
  service_fps: Record<string, number>;
  service_cores: Record<string, number>;
  node: string;
  cpu: string;
  cores: number;
  load: number[];
  targets: { ratio: boolean; learn: boolean; fps: boolean; service: boolean; k24: boolean; learn1000: boolean; cameraRss: boolean; cameras: boolean };
}

if (process.argv.includes('--rss-child')) {
  rssChild();
} else if (process.argv.includes('--service-child')) {
  await serviceChild();
} else if (process.argv.includes('--only')) {
  const part = process.argv[process.argv.indexOf('--only') + 1];
  if (part !== 'service') throw new Error(`--only: expected "service", got ${JSON.stringify(part)}`);
  await onlyService(process.argv.includes('--json'));
} else {
  await main(process.argv.includes('--json'));
}

/** The figures of the real service runs (runService with each of SERVICE_CAMERAS). */
interface ServiceFigures {
  camera_rss_mb: number;
  service_rss_mb: Record<string, number>;
  cameras_2fps_per_core: number;
  service_fps: Record<string, number>;
  service_cores: Record<string, number>;
}

/** Runs the real service with 1, 4 and 16 cameras; see runService. */
async function measureService(model: Subspace, progress: (message: string) => void): Promise<ServiceFigures> {
  const serviceRuns: ServiceRun[] = [];
  const jpegs = await snapshotJpegs();
  for (const cameras of SERVICE_CAMERAS) {
    progress(`the service with ${cameras} camera${cameras === 1 ? '' : 's'} at 2 frames per second …`);
    serviceRuns.push(await runService(cameras, jpegs, model));
  }
  const one = serviceRuns[0];
  const most = serviceRuns[serviceRuns.length - 1];
  // Memory per camera: what each camera beyond the first adds to the service's resident memory.
  const cameraRssMb = (most.rssMb - one.rssMb) / (most.cameras - one.cameras);
  // Cameras one core sustains at 2 frames per second: from the busiest run, the CPU time the
  // whole service (all threads: HTTP fetch, decoding, counting, storage, the main thread) spent
  // per camera-second at the rate it achieved, scaled to 2 frames per second.
  const perCameraCores = most.cores / most.cameras / (most.fps / most.cameras / 2);
  return {
    camera_rss_mb: round3(cameraRssMb),
    service_rss_mb: Object.fromEntries(serviceRuns.map((r) => [String(r.cameras), Math.round(r.rssMb)])),
    cameras_2fps_per_core: Math.round((1 / perCameraCores) * 10) / 10,
    service_fps: Object.fromEntries(serviceRuns.map((r) => [String(r.cameras), Math.round(r.fps * 10) / 10])),
    service_cores: Object.fromEntries(serviceRuns.map((r) => [String(r.cameras), round3(r.cores)])),
  };
}

/**
 * `--only service`: the real service runs alone (about three minutes), with the same model as the
 * full run (8 components learned on the 200 empty frames), for work on the service's memory.
 */
async function onlyService(json: boolean): Promise<void> {
  const progress = (message: string) => {
    if (!json) process.stderr.write(`${message}\n`);
  };
  const scene = createScene('reading-room', { width: WIDTH, height: HEIGHT });
  const learning = Array.from({ length: LEARNING_FRAMES }, (_, i) => scene.emptyFrameAt(i * 15).data);
  const model = fitSubspace(learning, scene, { components: COMPONENTS });
  const figures = await measureService(model, progress);
  const met = {
    cameraRss: figures.camera_rss_mb <= targets.cameraRssMb,
    cameras: figures.cameras_2fps_per_core * os.cpus().length >= targets.cameras,
  };
  const result = { ...figures, node: process.version, cores: os.cpus().length, load: os.loadavg().map((l) => Math.round(l * 100) / 100), targets: met };
  if (json) {
    process.stdout.write(`${JSON.stringify(result)}\n`);
    return;
  }
  const yes = (ok: boolean) => (ok ? 'met' : 'NOT met');
  const lines = [
    `real service         resident ${Object.entries(figures.service_rss_mb).map(([c, mb]) => `${c} cameras ${mb} MB`).join(', ')}: ${figures.camera_rss_mb.toFixed(1)} MB per camera`,
    `                     frames per second ${Object.entries(figures.service_fps).map(([c, f]) => `${c} cameras ${f}`).join(', ')}; cores used ${Object.entries(figures.service_cores).map(([c, f]) => `${c} cameras ${f.toFixed(2)}`).join(', ')}`,
    `                     ${figures.cameras_2fps_per_core.toFixed(1)} cameras at 2 fps per core`,
    `load average         ${result.load.join(' ')}`,
    '',
    `target ≤ ${targets.cameraRssMb} MB per camera       ${yes(met.cameraRss)}`,
    `target ≥ ${targets.cameras} cameras on ${result.cores} cores   ${yes(met.cameras)}`,
  ];
  process.stdout.write(`${lines.join('\n')}\n`);
}

async function main(json: boolean): Promise<void> {
  const progress = (message: string) => {
    if (!json) process.stderr.write(`${message}\n`);
  };
  const scene = createScene('reading-room', { width: WIDTH, height: HEIGHT });
  const learning = Array.from({ length: LEARNING_FRAMES }, (_, i) => scene.emptyFrameAt(i * 15).data);

  progress('learning …');
  const learnTimes: number[] = [];
  let model: Subspace | undefined;
  for (let run = 0; run < LEARN_RUNS; run++) {
    const t0 = performance.now();
    model = fitSubspace(learning, scene, { components: COMPONENTS });
    learnTimes.push(performance.now() - t0);
  }
  if (model === undefined) throw new Error('no model');
  const manyModel = fitSubspace(learning, scene, { components: MANY_COMPONENTS });
  learning.length = 0;

  progress(`learning ${MANY_LEARNING_FRAMES} frames …`);
  const many = Array.from({ length: MANY_LEARNING_FRAMES }, (_, i) => scene.emptyFrameAt(i * 3).data);
  const learnMany = { wall: Infinity, cpu: Infinity };
  for (let run = 0; run < 2; run++) {
    const t0 = performance.now();
    const c0 = process.cpuUsage();
    fitSubspace(many, scene);
    const cpu = process.cpuUsage(c0);
    learnMany.wall = Math.min(learnMany.wall, performance.now() - t0);
    learnMany.cpu = Math.min(learnMany.cpu, (cpu.user + cpu.system) / 1000);
  }
  many.length = 0;

  progress('memory per camera …');
  const memory = await measureRss(model);

  progress('rendering frames …');
  const warmup = Array.from({ length: WARMUP_FRAMES }, (_, i) => scene.frameAt(3000 + i * 10).frame);
  const frames = Array.from({ length: TIMED_FRAMES }, (_, i) => scene.frameAt(i * 10).frame);
  const cv = await loadOpenCv();
  const mats = [...warmup, ...frames].map((frame) => toMat(cv, frame));

  progress('timing the pipeline against MOG2 …');
  const counter = createCounter(model, scene.zones);
  const counter24 = createCounter(manyModel, scene.zones);
  const pipeline24Times: number[] = [];
  const staged = stagedPipeline(model, scene.zones);
  const mog2 = new cv.BackgroundSubtractorMOG2(500, 16, true);
  const mog2NoShadow = new cv.BackgroundSubtractorMOG2(500, 16, false);
  const fgMask = new cv.Mat();
  const fgMaskNoShadow = new cv.Mat();
  const pipelineTimes: number[] = [];
  const mog2Times: number[] = [];
  const mog2NoShadowTimes: number[] = [];
  const stageTimes: number[][] = [[], [], [], [], [], []];
  try {
    // MOG2 learns its background model from the empty frames first, as the subspace did.
    for (let i = 0; i < 100; i++) {
      const empty = toMat(cv, scene.emptyFrameAt(i * 30));
      try {
        mog2.apply(empty, fgMask);
        mog2NoShadow.apply(empty, fgMaskNoShadow);
      } finally {
        empty.delete();
      }
    }
    const all = [...warmup, ...frames];
    for (let round = 0; round < ROUNDS; round++) {
      for (let f = round === 0 ? 0 : WARMUP_FRAMES; f < all.length; f++) {
        const timed = f >= WARMUP_FRAMES;
        const frame = all[f];
        const mat = mats[f];
        const jobs = [
          () => counter.count(frame),
          () => mog2.apply(mat, fgMask),
          () => mog2NoShadow.apply(mat, fgMaskNoShadow),
          () => staged(frame, stageTimes, timed),
          () => counter24.count(frame),
        ];
        const sinks = [pipelineTimes, mog2Times, mog2NoShadowTimes, undefined, pipeline24Times];
        // Rotate the order frame by frame, so that no job always runs first (or after the same one).
        for (let j = 0; j < jobs.length; j++) {
          const which = (j + f) % jobs.length;
          const t0 = performance.now();
          jobs[which]();
          const dt = performance.now() - t0;
          if (timed) sinks[which]?.push(dt);
        }
      }
    }
  } finally {
    for (const mat of mats) mat.delete();
    fgMask.delete();
    fgMaskNoShadow.delete();
    mog2.delete();
    mog2NoShadow.delete();
  }

  progress('decoding …');
  const decodeTimes = await timeDecode();

  progress('how the per-frame cost grows with pixels and components …');
  const scaling = timeScaling();

  progress(`a camera as the service runs it, ${SERVICE_FRAMES} frames …`);
  const service = timeServiceCamera();

  const services = await measureService(model, progress);

  const pipelineMs = median(pipelineTimes);
  const mog2Ms = median(mog2Times);
  const mog2NoShadowMs = median(mog2NoShadowTimes);
  const decodeMs = median(decodeTimes);
  const learnMs = median(learnTimes);
  const fps = 1000 / (decodeMs + pipelineMs);
  const pipeline24Ms = median(pipeline24Times);
  const result: BenchResult = {
    width: WIDTH,
    height: HEIGHT,
    components: COMPONENTS,
    frames: pipelineTimes.length,
    pipeline_ms: round3(pipelineMs),
    pipeline_p90_ms: round3(quantile(pipelineTimes, 0.9)),
    mog2_ms: round3(mog2Ms),
    mog2_noshadow_ms: round3(mog2NoShadowMs),
    ratio: round3(pipelineMs / mog2Ms),
    ratio_noshadow: round3(pipelineMs / mog2NoShadowMs),
    stages: {
      residual_ms: round3(median(stageTimes[0])),
      noise_scale_ms: round3(median(stageTimes[1])),
      threshold_ms: round3(median(stageTimes[2])),
      morphology_ms: round3(median(stageTimes[3])),
      labelling_ms: round3(median(stageTimes[4])),
      zones_ms: round3(median(stageTimes[5])),
    },
    decode_ms: round3(decodeMs),
    fps: Math.round(fps * 10) / 10,
    learn_ms: Math.round(learnMs),
    rss_mb: round3(memory.rssMb),
    model_mb: round3(memory.modelMb),
    buffers_mb: round3(memory.buffersMb),
    scaling,
    service_frame_ms: round3(service.meanMs),
    service_frame_p90_ms: round3(service.p90Ms),
    service_updates: service.updates,
    service_rescales: service.rescales,
    pipeline_ms_k24: round3(pipeline24Ms),
    learn_1000_ms: Math.round(learnMany.wall),
    learn_1000_cpu_ms: Math.round(learnMany.cpu),
    ...services,
    node: process.version,
    cpu: os.cpus()[0]?.model ?? 'unknown',
    cores: os.cpus().length,
    load: os.loadavg().map((l) => Math.round(l * 100) / 100),
    targets: {
      ratio: pipelineMs / mog2Ms <= targets.ratio,
      learn: learnMs <= targets.learnMs,
      fps: fps >= targets.fps,
      service: service.meanMs / mog2Ms <= targets.serviceRatio,
      k24: pipeline24Ms / mog2Ms <= targets.k24Ratio,
      learn1000: learnMany.wall <= targets.learn1000Ms,
      cameraRss: services.camera_rss_mb <= targets.cameraRssMb,
      cameras: services.cameras_2fps_per_core * os.cpus().length >= targets.cameras,
    },
  };
  process.stdout.write(json ? `${JSON.stringify(result)}\n` : report(result));
}

/**
 * A second counter with the same settings that reads the clock around every stage
 * (createCounter's `timeStages`); pushes each stage's time of a frame into `times` when `record`
 * is set. Kept apart from the timed whole-pipeline counter so that its clock reads do not count.
 */
function stagedPipeline(model: Subspace, zones: Parameters<typeof createCounter>[1]) {
  const counter = createCounter(model, zones, { timeStages: true });
  return (frame: GreyFrame, times: number[][], record: boolean) => {
    counter.stageTimes.fill(0);
    const counted = counter.count(frame);
    if (record) counter.stageTimes.forEach((ms, stage) => times[stage].push(ms));
    return counted.foregroundShare;
  };
}

/** Times decodeImage on a 640×480 JPEG to 320×240, with libvips on one thread. */
async function timeDecode(): Promise<number[]> {
  const big = createScene('reading-room', { width: 640, height: 480 });
  const { frame } = big.frameAt(1234);
  const bytes = Uint8Array.from(frame.data, (v) => Math.min(255, Math.max(0, Math.round(v))));
  // A colour JPEG, as cameras send: the grey picture in three equal channels.
  const rgb = new Uint8Array(bytes.length * 3);
  for (let i = 0; i < bytes.length; i++) rgb[3 * i] = rgb[3 * i + 1] = rgb[3 * i + 2] = bytes[i];
  const jpeg = await sharp(rgb, { raw: { width: 640, height: 480, channels: 3 } }).jpeg({ quality: 85 }).toBuffer();
  const previous = sharp.concurrency();
  sharp.concurrency(1);
  try {
    for (let i = 0; i < 20; i++) await decodeImage(jpeg, { width: WIDTH, height: HEIGHT });
    const times: number[] = [];
    for (let i = 0; i < DECODE_RUNS; i++) {
      const t0 = performance.now();
      const decoded = await decodeImage(jpeg, { width: WIDTH, height: HEIGHT });
      times.push(performance.now() - t0);
      if (decoded.width !== WIDTH || decoded.height !== HEIGHT) throw new Error('decodeImage returned the wrong size');
    }
    return times;
  } finally {
    sharp.concurrency(previous);
  }
}

/** A grey frame as an 8-bit opencv.js Mat (caller deletes it). */
function toMat(cv: any, frame: GreyFrame): any {
  const mat = new cv.Mat(frame.height, frame.width, cv.CV_8UC1);
  const data: Uint8Array = mat.data;
  for (let i = 0; i < frame.data.length; i++) data[i] = Math.min(255, Math.max(0, Math.round(frame.data[i])));
  return mat;
}

interface Memory {
  rssMb: number;
  modelMb: number;
  buffersMb: number;
}

/** Runs this file as a child with --expose-gc and hands it the model; see rssChild. */
function measureRss(model: Subspace): Promise<Memory> {
  return new Promise((resolve, reject) => {
    const child = fork(fileURLToPath(import.meta.url), ['--rss-child'], {
      execArgv: [...process.execArgv, '--expose-gc'],
      serialization: 'advanced',
      stdio: ['ignore', 'ignore', 'inherit', 'ipc'],
    });
    child.once('message', (message) => resolve(message as Memory));
    child.once('error', reject);
    child.once('exit', (code) => reject(new Error(`memory child exited with code ${code} before reporting`)));
    child.send({ model: { ...model } });
  });
}

/** The child side of measureRss. */
function rssChild(): void {
  process.once('message', (message) => {
    const { model } = message as { model: Subspace };
    const gc = (globalThis as { gc?: () => void }).gc;
    if (gc === undefined) throw new Error('the memory child needs --expose-gc');
    const scene = createScene('reading-room', { width: WIDTH, height: HEIGHT });
    const frame = scene.frameAt(0).frame;
    // Warm the code paths once, so that compiled code is not counted as per-camera memory.
    const warm = createCounter(model, scene.zones);
    for (let t = 0; t < 5; t++) warm.count(scene.frameAt(t * 10, frame).frame);
    gc();
    gc();
    const before = process.memoryUsage().rss;
    const cameras: unknown[] = [];
    for (let c = 0; c < RSS_CAMERAS; c++) {
      const own: Subspace = {
        ...model,
        mean: Float32Array.from(model.mean),
        basis: Float32Array.from(model.basis),
        noise: Float32Array.from(model.noise),
        eigenvalues: Float64Array.from(model.eigenvalues),
      };
      const counter = createCounter(own, scene.zones);
      for (let t = 0; t < 30; t++) counter.count(scene.frameAt(t * 10 + c, frame).frame);
      cameras.push({ own, counter });
    }
    gc();
    gc();
    const after = process.memoryUsage().rss;
    const d = model.width * model.height;
    const modelBytes = model.mean.byteLength + model.basis.byteLength + model.noise.byteLength + model.eigenvalues.byteLength;
    // createCounter's buffers: thresholds (Float32 d), three masks (d bytes each), labels (Int32 d),
    // union–find table (Int32 d/2), morphology (2d bytes); with the kernels, the WebAssembly memory
    // of its kernels (the model in kernel layout, the per-frame buffers), else the JS stages' 1/σ²,
    // energy and scratch (Float32 d each) and samples (d/7).
    const kernelBytes = (cameras[0] as { counter: { kernelBytes: number } }).counter.kernelBytes;
    const jsStageBytes = kernelBytes > 0 ? 0 : 3 * 4 * d + 4 * Math.ceil(d / 7);
    const bufferBytes = 4 * d + 3 * d + 4 * d + 4 * (Math.ceil(d / 2) + 1) + 2 * d + kernelBytes + jsStageBytes;
    const mb = 1024 * 1024;
    process.send?.({ rssMb: (after - before) / cameras.length / mb, modelMb: modelBytes / mb, buffersMb: bufferBytes / mb } satisfies Memory, () => {
      process.exit(0);
    });
  });
}

/**
 * `createCounter().count` on the reading room at three frame sizes (8 components) and with 4 to
 * 24 components (320×240): medians over 150 frames, the counters interleaved frame by frame.
 */
function timeScaling(): BenchResult['scaling'] {
  const run = (setups: { key: string; size: { width: number; height: number }; k: number }[]) => {
    const cases = setups.map(({ key, size, k }) => {
      const scene = createScene('reading-room', size);
      const model = fitSubspace(Array.from({ length: 100 }, (_, i) => scene.emptyFrameAt(i * 30).data), scene, { components: k });
      const frames = Array.from({ length: 150 }, (_, i) => scene.frameAt(i * 20).frame);
      return { key, counter: createCounter(model, scene.zones), frames, times: [] as number[] };
    });
    for (let f = 0; f < 150; f++) {
      for (let j = 0; j < cases.length; j++) {
        const c = cases[(j + f) % cases.length];
        const t0 = performance.now();
        c.counter.count(c.frames[f]);
        if (f >= 20) c.times.push(performance.now() - t0);
      }
    }
    return Object.fromEntries(cases.map((c) => [c.key, round3(median(c.times))]));
  };
  return {
    pixels: run([
      { key: '160x120', size: { width: 160, height: 120 }, k: COMPONENTS },
      { key: '320x240', size: { width: 320, height: 240 }, k: COMPONENTS },
      { key: '640x480', size: { width: 640, height: 480 }, k: COMPONENTS },
    ]),
    components: run([4, 8, 16, 24].map((k) => ({ key: String(k), size: { width: WIDTH, height: HEIGHT }, k }))),
  };
}

interface ServiceCamera {
  meanMs: number;
  p90Ms: number;
  updates: number;
  rescales: number;
}

/**
 * One camera as the service's worker runs it (createCameraPipeline: the drifting counter with
 * the service's options, blob following, smoothing, samples written to a real store), fed the
 * reading room at 2 frames per second of scene time under a slow drift (window light and a
 * sunbeam: withSlowDrift), so that the background updates (once a second) and rescales happen
 * as they would. Each frame is rendered first, then `handlers.frame` is timed; the mean over all
 * frames includes the updates' and rescales' share.
 */
function timeServiceCamera(): ServiceCamera {
  const base = createReadingRoom({ width: WIDTH, height: HEIGHT, frameRate: 2, noise: 0 });
  const start = base.lightingPeriod;
  const scene = withSlowDrift(base, {
    start,
    duration: SERVICE_FRAMES,
    noise: 2.5,
    window: 0.15,
    beam: { from: [0.2, 0.72], to: [0.85, 0.66], size: [0.3, 0.34], boost: 0.5, softness: 0.12 },
  });
  const model = fitSubspace(Array.from({ length: 200 }, (_, i) => scene.emptyFrameAt(Math.floor((i * start) / 200)).data), scene, { components: COMPONENTS });
  const dir = mkdtempSync(join(os.tmpdir(), 'residuum-bench-'));
  const store = openStore(join(dir, 'bench.db'), { timeZone: 'UTC' });
  try {
    const camera: CameraConfig = {
      id: 'bench',
      name: 'Bench',
      source: { kind: 'synthetic', scene: 'reading-room', id: 'bench', size: { width: WIDTH, height: HEIGHT } },
      learnSeconds: 60,
      sampleSeconds: 10,
      smoothing: { window: 5, method: 'median' },
      threshold: 3,
      zones: scene.zones,
    };
    store.upsertCamera({ id: camera.id, name: camera.name });
    for (const zone of camera.zones) store.upsertZone(camera.id, zone);
    const pipeline = createCameraPipeline({ camera, store, model });
    // The same drifting counter as the pipeline's, fed the same frames untimed, to report how many
    // updates and rescales the timed frames included.
    let clock = 0;
    const witness = createDriftingCounter(model, scene.zones, { threshold: 3, clock: () => clock });
    const t0 = Date.UTC(2026, 0, 1);
    const times: number[] = [];
    for (let i = 0; i < WARMUP_FRAMES + SERVICE_FRAMES; i++) {
      const t = start + i - WARMUP_FRAMES;
      const { frame } = scene.frameAt(Math.max(0, t));
      const began = performance.now();
      pipeline.handlers.frame(frame, t0 + i * 500);
      const dt = performance.now() - began;
      if (i >= WARMUP_FRAMES) times.push(dt);
      clock = t0 + i * 500;
      witness.count(frame);
    }
    pipeline.stop();
    const { updates, rescales } = witness.driftState();
    return { meanMs: times.reduce((a, b) => a + b, 0) / times.length, p90Ms: quantile(times, 0.9), updates, rescales };
  } finally {
    store.close();
    rmSync(dir, { recursive: true, force: true });
  }
}

interface ServiceRun {
  cameras: number;
  /** Resident memory of the whole service process (all threads) after warm-up, MB. */
  rssMb: number;
  /** Frames counted per second over the measured window, all cameras. */
  fps: number;
  /** CPU time of the whole process over the measured window ÷ its wall time. */
  cores: number;
}

/** Reading-room frames at 640×480 as colour JPEGs (quality 85), as snapshot cameras send them. */
async function snapshotJpegs(): Promise<Buffer[]> {
  const big = createScene('reading-room', { width: 640, height: 480 });
  return Promise.all(
    Array.from({ length: 40 }, async (_, i) => {
      const { frame } = big.frameAt(i * 25);
      const rgb = new Uint8Array(frame.data.length * 3);
      for (let p = 0; p < frame.data.length; p++) rgb[3 * p] = rgb[3 * p + 1] = rgb[3 * p + 2] = Math.min(255, Math.max(0, Math.round(frame.data[p])));
      return sharp(rgb, { raw: { width: 640, height: 480, channels: 3 } }).jpeg({ quality: 85 }).toBuffer();
    }),
  );
}

/**
 * The real service (`startService`, as `residuum run` starts it: one worker thread per camera,
 * HTTP server, store) in a child process with `cameras` snapshot cameras polling this process
 * every 500 ms (2 frames per second) for 640×480 JPEGs of the reading room, decoded to 320×240;
 * each camera starts with the benchmark's 8-component model, stored in the service's database. The child reports its resident memory
 * after SERVICE_WARMUP_S seconds and its CPU time and frames over the next SERVICE_MEASURE_S.
 */
async function runService(cameras: number, jpegs: Buffer[], model: Subspace): Promise<ServiceRun> {
  let served = 0;
  const server: Server = createServer((request, response) => {
    const frame = jpegs[Math.floor(Date.now() / 500 + Number(/\d+/.exec(request.url ?? '')?.[0] ?? 0)) % jpegs.length];
    served++;
    response.writeHead(200, { 'content-type': 'image/jpeg', 'content-length': frame.length });
    response.end(frame);
  });
  await new Promise<void>((done) => server.listen(0, '127.0.0.1', done));
  const port = (server.address() as { port: number }).port;
  try {
    return await new Promise<ServiceRun>((resolve, reject) => {
      const child = fork(fileURLToPath(import.meta.url), ['--service-child', String(cameras), String(port)], {
        execArgv: [...process.execArgv],
        // As `npm start` runs the service.
        env: { ...process.env, MALLOC_ARENA_MAX: '2', MALLOC_MMAP_THRESHOLD_: '131072' },
        serialization: 'advanced',
        stdio: ['ignore', 'ignore', 'inherit', 'ipc'],
      });
      child.once('message', (message) => resolve({ cameras, ...(message as Omit<ServiceRun, 'cameras'>) }));
      child.once('error', reject);
      child.once('exit', (code) => reject(new Error(`service child exited with code ${code} before reporting (${served} snapshots served)`)));
      child.send({ model: { ...model } });
    });
  } finally {
    server.close();
    server.closeAllConnections();
  }
}

/** The child side of runService. */
async function serviceChild(): Promise<void> {
  const at = process.argv.indexOf('--service-child');
  const cameras = Number(process.argv[at + 1]);
  const port = Number(process.argv[at + 2]);
  // The model comes from the parent (learning here would leave its kernel memory in this process).
  const { model } = await new Promise<{ model: Subspace }>((done) => process.once('message', (message) => done(message as { model: Subspace })));
  const dir = mkdtempSync(join(os.tmpdir(), 'residuum-bench-service-'));
  try {
    const scene = createScene('reading-room', { width: WIDTH, height: HEIGHT });
    const configs: CameraConfig[] = Array.from({ length: cameras }, (_, c) => ({
      id: `cam-${c}`,
      name: `Camera ${c}`,
      source: { kind: 'snapshot', id: `cam-${c}`, size: { width: WIDTH, height: HEIGHT }, url: `http://127.0.0.1:${port}/cam/${c}.jpg`, intervalMs: 500 },
      learnSeconds: 60,
      sampleSeconds: 10,
      smoothing: { window: 5, method: 'median' },
      threshold: 3,
      zones: scene.zones,
    }));
    const store = openStore(join(dir, 'residuum.db'), { timeZone: 'UTC' });
    for (const c of configs) {
      store.upsertCamera({ id: c.id, name: c.name });
      storeModel(store, c.id, model, 'bench');
    }
    store.close();
    const config: ResiduumConfig = {
      file: 'bench',
      site: { name: 'Residuum bench', timeZone: 'UTC' },
      storage: { sampleRetentionDays: 30 },
      server: { host: '127.0.0.1', port: 0, viewToken: false },
      cameras: configs,
    };
    const running = await startService(config, { dataDir: dir, port: 0 });
    let frames = 0;
    const last = new Map<string, number | undefined>();
    for (const host of running.cameras.values()) {
      host.on('live', (live: { camera: string; lastFrameAt?: number }) => {
        if (live.lastFrameAt !== undefined && live.lastFrameAt !== last.get(live.camera)) {
          last.set(live.camera, live.lastFrameAt);
          frames++;
        }
      });
    }
    const rss = () => Number(/^VmRSS:\s+(\d+) kB$/m.exec(readFileSync('/proc/self/status', 'utf8'))?.[1] ?? 0) / 1024;
    await new Promise((done) => setTimeout(done, SERVICE_WARMUP_S * 1000));
    const rssMb = rss();
    const cpu0 = process.cpuUsage();
    const frames0 = frames;
    const wall0 = performance.now();
    await new Promise((done) => setTimeout(done, SERVICE_MEASURE_S * 1000));
    const cpu = process.cpuUsage(cpu0);
    const seconds = (performance.now() - wall0) / 1000;
    const counted = frames - frames0;
    await running.stop();
    process.send?.({ rssMb, fps: counted / seconds, cores: (cpu.user + cpu.system) / 1e6 / seconds } satisfies Omit<ServiceRun, 'cameras'>, () => {
      rmSync(dir, { recursive: true, force: true });
      process.exit(0);
    });
  } catch (error) {
    rmSync(dir, { recursive: true, force: true });
    throw error;
  }
}

function report(r: BenchResult): string {
  const yes = (ok: boolean) => (ok ? 'met' : 'NOT met');
  const lines = [
    `Residuum speed, ${r.width}×${r.height}, ${r.components} components, ${r.frames} timed frames (medians)`,
    `machine              ${r.cpu}, ${r.cores} cores, Node ${r.node}`,
    '',
    `pipeline             ${r.pipeline_ms.toFixed(2)} ms per frame (90th percentile ${r.pipeline_p90_ms.toFixed(2)} ms)`,
    `  residual           ${r.stages.residual_ms.toFixed(2)} ms`,
    `  noise scale        ${r.stages.noise_scale_ms.toFixed(2)} ms`,
    `  threshold          ${r.stages.threshold_ms.toFixed(2)} ms`,
    `  morphology         ${r.stages.morphology_ms.toFixed(2)} ms`,
    `  labelling          ${r.stages.labelling_ms.toFixed(2)} ms`,
    `  zones              ${r.stages.zones_ms.toFixed(2)} ms`,
    `MOG2 (opencv.js)     ${r.mog2_ms.toFixed(2)} ms per frame (without shadow detection ${r.mog2_noshadow_ms.toFixed(2)} ms)`,
    `ratio                ${r.ratio.toFixed(3)} (without shadows ${r.ratio_noshadow.toFixed(3)})`,
    `decode 640×480 JPEG  ${r.decode_ms.toFixed(2)} ms to ${r.width}×${r.height} grey`,
    `decode + pipeline    ${r.fps.toFixed(1)} frames per second on one core`,
    `learning 200 frames  ${r.learn_ms} ms`,
    `memory per camera    ${r.rss_mb.toFixed(1)} MB resident (model ${r.model_mb.toFixed(1)} MB, counter buffers ${r.buffers_mb.toFixed(1)} MB)`,
    `pipeline, 24 comp.   ${r.pipeline_ms_k24.toFixed(2)} ms per frame (${(r.pipeline_ms_k24 / r.mog2_ms).toFixed(3)} of MOG2)`,
    `service camera       ${r.service_frame_ms.toFixed(2)} ms per frame, mean over ${SERVICE_FRAMES} frames at 2 fps with drift (90th percentile ${r.service_frame_p90_ms.toFixed(2)} ms; ${r.service_updates} updates, ${r.service_rescales} rescales; ${(r.service_frame_ms / r.mog2_ms).toFixed(3)} of MOG2)`,
    `learning ${MANY_LEARNING_FRAMES} frames ${r.learn_1000_ms} ms (CPU ${r.learn_1000_cpu_ms} ms)`,
    `real service         resident ${Object.entries(r.service_rss_mb).map(([c, mb]) => `${c} cameras ${mb} MB`).join(', ')}: ${r.camera_rss_mb.toFixed(1)} MB per camera`,
    `                     frames per second ${Object.entries(r.service_fps).map(([c, f]) => `${c} cameras ${f}`).join(', ')}; cores used ${Object.entries(r.service_cores).map(([c, f]) => `${c} cameras ${f.toFixed(2)}`).join(', ')}`,
    `                     ${r.cameras_2fps_per_core.toFixed(1)} cameras at 2 fps per core (snapshot sources, 640×480 JPEG decoded to ${r.width}×${r.height})`,
    `per frame by size    ${Object.entries(r.scaling.pixels).map(([size, ms]) => `${size} ${ms.toFixed(2)} ms`).join(', ')} (8 components)`,
    `per frame by k       ${Object.entries(r.scaling.components).map(([k, ms]) => `k=${k} ${ms.toFixed(2)} ms`).join(', ')} (${r.width}×${r.height})`,
    `load average         ${r.load.join(' ')}`,
    '',
    `target ratio ≤ ${targets.ratio}            ${yes(r.targets.ratio)}`,
    `target learning ≤ ${targets.learnMs / 1000} s           ${yes(r.targets.learn)}`,
    `target ≥ ${targets.fps} frames per second  ${yes(r.targets.fps)}`,
    `target service ≤ ${targets.serviceRatio} × MOG2     ${yes(r.targets.service)}`,
    `target 24 comp. ≤ MOG2          ${yes(r.targets.k24)}`,
    `target learning 1000 ≤ ${targets.learn1000Ms / 1000} s     ${yes(r.targets.learn1000)}`,
    `target ≤ ${targets.cameraRssMb} MB per camera       ${yes(r.targets.cameraRss)}`,
    `target ≥ ${targets.cameras} cameras on ${r.cores} cores   ${yes(r.targets.cameras)}`,
  ];
  return `${lines.join('\n')}\n`;
}

function median(values: readonly number[]): number {
  return quantile(values, 0.5);
}

/** The q-quantile by linear interpolation between order statistics (NaN for no values). */
function quantile(values: readonly number[], q: number): number {
  if (values.length === 0) return NaN;
  const sorted = [...values].sort((a, b) => a - b);
  const at = (sorted.length - 1) * q;
  const lo = Math.floor(at);
  const hi = Math.ceil(at);
  return sorted[lo] + (sorted[hi] - sorted[lo]) * (at - lo);
}

function round3(value: number): number {
  return Math.round(value * 1000) / 1000;
}
