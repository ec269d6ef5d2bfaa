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
 * Frames are rendered (and converted to 8-bit for opencv.js) before timing, so that rendering
 * costs nothing in the timed loop. Nothing is written to disk.
 */
import { fork } from 'node:child_process';
import os from 'node:os';
import { fileURLToPath } from 'node:url';
import sharp from 'sharp';
import { createCounter } from '../src/counting/createCounter.ts';
import { decodeImage } from '../src/frames/decodeImage.ts';
import type { GreyFrame } from '../src/frames/frame.ts';
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

/** The targets of the speed issue, at 320×240 with 8 components. */
const targets = {
  /** pipeline_ms / mog2_ms at most this. */
  ratio: 0.5,
  /** fitSubspace on 200 frames at most this, ms. */
  learnMs: 2000,
  /** decode plus pipeline at least this many frames per second on one core. */
  fps: 60,
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
  node: string;
  cpu: string;
  cores: number;
  targets: { ratio: boolean; learn: boolean; fps: boolean };
}

if (process.argv.includes('--rss-child')) {
  rssChild();
} else {
  await main(process.argv.includes('--json'));
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
  learning.length = 0;

  progress('memory per camera …');
  const memory = await measureRss(model);

  progress('rendering frames …');
  const warmup = Array.from({ length: WARMUP_FRAMES }, (_, i) => scene.frameAt(3000 + i * 10).frame);
  const frames = Array.from({ length: TIMED_FRAMES }, (_, i) => scene.frameAt(i * 10).frame);
  const cv = await loadOpenCv();
  const mats = [...warmup, ...frames].map((frame) => toMat(cv, frame));

  progress('timing the pipeline against MOG2 …');
  const counter = createCounter(model, scene.zones);
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
        ];
        const sinks = [pipelineTimes, mog2Times, mog2NoShadowTimes, undefined];
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

  const pipelineMs = median(pipelineTimes);
  const mog2Ms = median(mog2Times);
  const mog2NoShadowMs = median(mog2NoShadowTimes);
  const decodeMs = median(decodeTimes);
  const learnMs = median(learnTimes);
  const fps = 1000 / (decodeMs + pipelineMs);
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
    node: process.version,
    cpu: os.cpus()[0]?.model ?? 'unknown',
    cores: os.cpus().length,
    targets: {
      ratio: pipelineMs / mog2Ms <= targets.ratio,
      learn: learnMs <= targets.learnMs,
      fps: fps >= targets.fps,
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
    '',
    `target ratio ≤ ${targets.ratio}            ${yes(r.targets.ratio)}`,
    `target learning ≤ ${targets.learnMs / 1000} s           ${yes(r.targets.learn)}`,
    `target ≥ ${targets.fps} frames per second  ${yes(r.targets.fps)}`,
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
