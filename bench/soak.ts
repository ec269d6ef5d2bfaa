// `npm run soak [-- --frames N] [--cameras C] [--main-thread] [--slow-camera MS] [--young-mb MB] [--json]`: runs C
// synthetic cameras (default 4) as fast as they go, N frames in all (default 200 000), writing
// samples to a temporary database, and reports the frame rate, the use of the machine's cores,
// resident memory growth after warm-up (the trend: median of the last tenth of the run against the
// tenth after warm-up; and the peak), each thread's V8 heap early and late in the run (`heaps`:
// the main thread's, and each camera worker's from its heartbeats), open file descriptors, active
// handles and threads before and after. Not part of `npm test`.
//
// By default the cameras run as the service runs them (startService): each in its own worker
// thread, with its source, counting and sample writes there, the main thread serving HTTP. Frames
// come from the synthetic camera source at its fastest speed; samples every 2 s of wall time.
// `--main-thread` runs the pipelines in this thread instead, driven directly with pre-rendered
// scene frames and scene time (one sample per zone every 100 frames), as before the workers, for
// comparison. `--slow-camera MS` (workers only) makes camera 0 block its thread MS ms after every
// frame, a camera with a slow decoder: the others' rates show whether it holds them up.
// `--young-mb MB` sets the bound of each camera worker's young generation (workerYoungGenerationMb,
// default 8 MB).
import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { availableParallelism, tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { parseArgs } from 'node:util';
import { startService } from '../src/commands/run.ts';
import type { CameraConfig, ResiduumConfig } from '../src/config/loadConfig.ts';
import { createCameraPipeline } from '../src/counting/cameraPipeline.ts';
import { storeModel } from '../src/counting/storeModel.ts';
import { createScene, type SceneId, type SyntheticScene } from '../src/frames/synthetic/index.ts';
import { openStore } from '../src/store/index.ts';
import { fitSubspace } from '../src/vision/fitSubspace.ts';
import type { Subspace } from '../src/vision/subspace.ts';

const { values } = parseArgs({
  options: { frames: { type: 'string' }, cameras: { type: 'string' }, json: { type: 'boolean' }, 'main-thread': { type: 'boolean' }, 'slow-camera': { type: 'string' }, 'young-mb': { type: 'string' } },
});
const total = Number(values.frames ?? 200_000);
const cameraCount = Number(values.cameras ?? 4);
const slowMs = values['slow-camera'] === undefined ? undefined : Number(values['slow-camera']);
const mode = values['main-thread'] ? 'main-thread' : 'workers';
const youngMb = values['young-mb'] === undefined ? undefined : Number(values['young-mb']);
if (youngMb !== undefined && !(youngMb >= 1 && mode === 'workers')) throw new RangeError('--young-mb: expected MB ≥ 1, with the worker threads (not --main-thread)');
if (!(Number.isInteger(total) && total >= 100)) throw new RangeError(`--frames: expected a whole number ≥ 100, got ${values.frames}`);
if (!(Number.isInteger(cameraCount) && cameraCount >= 1 && cameraCount <= 32)) throw new RangeError(`--cameras: expected a whole number 1..32, got ${values.cameras}`);
if (slowMs !== undefined && !(slowMs > 0 && mode === 'workers')) throw new RangeError('--slow-camera: expected milliseconds > 0, with the worker threads (not --main-thread)');

const dir = mkdtempSync(join(tmpdir(), 'residuum-soak-'));
const fds = () => readdirSync('/proc/self/fd').length;
const handles = () => process.getActiveResourcesInfo().length;
/** Threads of the process (Linux proc(5), /proc/self/status): worker threads are among them. */
const threads = () => Number(/^Threads:\s+(\d+)$/m.exec(readFileSync('/proc/self/status', 'utf8'))?.[1] ?? 0);
const progress = (line: string) => {
  if (!values.json) process.stderr.write(`\r${line}`);
};

interface SoakCamera {
  readonly config: CameraConfig;
  readonly scene: SyntheticScene;
  readonly model: Subspace;
}

const cameras: SoakCamera[] = Array.from({ length: cameraCount }, (_, c) => {
  const id = (c % 2 === 0 ? 'reading-room' : 'stock-room') as SceneId;
  const scene = createScene(id, { seed: c + 1 });
  const model = fitSubspace(Array.from({ length: 100 }, (_, i) => scene.emptyFrameAt(i * 30).data), scene, { components: 8 });
  const config: CameraConfig = {
    id: `cam-${c}`,
    name: `Camera ${c}`,
    source: { kind: 'synthetic', scene: id, id: `cam-${c}`, size: { width: scene.width, height: scene.height }, seed: c + 1, speed: 1000 },
    learnSeconds: 30,
    sampleSeconds: mode === 'workers' ? 2 : 10,
    smoothing: { window: 5, method: 'median' },
    threshold: 3,
    zones: scene.zones,
  };
  return { config, scene, model };
});

const before = { fds: fds(), handles: handles(), threads: threads() };
// Memory: resident size sampled through the run as (frames done, bytes). Growth is the trend —
// the median of the last tenth of the run against the median of the tenth after warm-up (10–20 %
// of the frames) — so that a garbage collector's sawtooth in the camera threads is not read as a
// leak; the peak after warm-up is reported too.
const warmup = Math.min(2000 * cameraCount, Math.floor(total / 10));
const rssSeries: { done: number; rss: number }[] = [];
// The V8 heaps through the run, as (frames done, used bytes, external bytes): the main thread's and
// (in worker mode) each camera worker's from its heartbeat. A heap whose used size climbs with the
// frames is a leak in JavaScript; resident memory that climbs while the heaps stay level is the
// allocator or native memory.
interface HeapPoint { readonly done: number; readonly used: number; readonly external: number }
const heapSeries = new Map<string, HeapPoint[]>();
const recordHeap = (thread: string, done: number, used: number, external: number) => {
  let list = heapSeries.get(thread);
  if (!list) heapSeries.set(thread, (list = []));
  list.push({ done, used, external });
};
let warmRss = 0;
let peakRss = 0;
const rates: number[] = [];
const frames = new Map<string, number>(cameras.map((c) => [c.config.id, 0]));
const busy = new Map<string, number[]>(cameras.map((c) => [c.config.id, []]));
// Set when the cameras start counting (after the workers started, in worker mode).
let cpuStart = process.cpuUsage();
let mainLoopStart = performance.eventLoopUtilization();
let started = performance.now();
let samples = 0;
let seconds = 0;
let cpu = { user: 0, system: 0 };
let mainLoop = { utilization: 0 };
const stopClock = () => {
  seconds = (performance.now() - started) / 1000;
  cpu = process.cpuUsage(cpuStart);
  mainLoop = performance.eventLoopUtilization(mainLoopStart);
};
const startClock = () => {
  cpuStart = process.cpuUsage();
  mainLoopStart = performance.eventLoopUtilization();
  started = performance.now();
};

const sample = (done: number) => {
  if (done >= warmup && warmRss === 0) {
    global.gc?.();
    warmRss = process.memoryUsage().rss;
  }
  if (warmRss > 0) {
    const rss = process.memoryUsage().rss;
    peakRss = Math.max(peakRss, rss);
    rssSeries.push({ done, rss });
    const main = process.memoryUsage();
    recordHeap('main', done, main.heapUsed, main.external);
  }
};

if (mode === 'workers') {
  const store = openStore(join(dir, 'residuum.db'), { timeZone: 'UTC' });
  for (const c of cameras) {
    store.upsertCamera({ id: c.config.id, name: c.config.name });
    storeModel(store, c.config.id, c.model, 'soak');
  }
  store.close();
  const config: ResiduumConfig = {
    file: 'soak',
    site: { name: 'Residuum soak', timeZone: 'UTC' },
    storage: { sampleRetentionDays: 30 },
    server: { host: '127.0.0.1', port: 0, viewToken: false },
    cameras: cameras.map((c) => c.config),
  };
  const service = await startService(config, { dataDir: dir, port: 0, ...(youngMb !== undefined && { workerYoungGenerationMb: youngMb }), ...(slowMs !== undefined && { workerFaults: { 'cam-0': { slowFrameMs: slowMs } } }) });
  const last = new Map<string, number | undefined>();
  for (const host of service.cameras.values()) {
    host.utilization();
    host.on('live', (live) => {
      if (live.lastFrameAt !== undefined && live.lastFrameAt !== last.get(live.camera)) {
        last.set(live.camera, live.lastFrameAt);
        frames.set(live.camera, (frames.get(live.camera) ?? 0) + 1);
      }
    });
  }
  const counted = () => [...frames.values()].reduce((a, b) => a + b, 0);
  startClock();
  let windowStart = performance.now();
  let windowFrames = 0;
  while (counted() < total) {
    await new Promise((done) => setTimeout(done, 1000));
    const now = performance.now();
    const n = counted();
    rates.push((n - windowFrames) / ((now - windowStart) / 1000));
    windowStart = now;
    windowFrames = n;
    for (const host of service.cameras.values()) busy.get(host.id)!.push(host.utilization());
    sample(n);
    if (warmRss > 0) {
      for (const host of service.cameras.values()) {
        const heap = host.heap();
        if (heap) recordHeap(host.id, n, heap.usedBytes, heap.externalBytes);
      }
    }
    progress(`${n} frames, ${rates.at(-1)!.toFixed(0)} frames/s`);
  }
  stopClock();
  samples = (service.store.db.prepare('select count(*) as n from samples').get() as { n: number }).n;
  await service.stop();
} else {
  const store = openStore(join(dir, 'soak.db'), { timeZone: 'UTC' });
  const pipelines = cameras.map((c) => {
    store.upsertCamera({ id: c.config.id, name: c.config.name });
    for (const zone of c.config.zones) store.upsertZone(c.config.id, zone);
    return { scene: c.scene, pipeline: createCameraPipeline({ camera: c.config, store, model: c.model }) };
  });
  const t0 = Date.UTC(2026, 0, 1);
  const perCamera = Math.ceil(total / cameraCount);
  startClock();
  let windowStart = performance.now();
  for (let i = 0; i < perCamera; i++) {
    for (const { scene, pipeline } of pipelines) pipeline.handlers.frame(scene.frameAt(i % 36000).frame, t0 + i * 100);
    for (const c of cameras) frames.set(c.config.id, i + 1);
    sample((i + 1) * cameraCount);
    if ((i + 1) % 1000 === 0) {
      const now = performance.now();
      rates.push((1000 * cameraCount) / ((now - windowStart) / 1000));
      windowStart = now;
      progress(`${(i + 1) * cameraCount} frames, ${rates.at(-1)!.toFixed(0)} frames/s`);
      await new Promise((done) => setImmediate(done));
    }
  }
  stopClock();
  for (const { pipeline } of pipelines) pipeline.stop();
  samples = (store.db.prepare('select count(*) as n from samples').get() as { n: number }).n;
  store.close();
}

rmSync(dir, { recursive: true, force: true });
await new Promise((done) => setTimeout(done, 100)); // closed handles leave the list after libuv's close callbacks
const after = { fds: fds(), handles: handles(), threads: threads() };
const counted = [...frames.values()].reduce((a, b) => a + b, 0);
const mean = (list: number[]) => (list.length === 0 ? 0 : list.reduce((a, b) => a + b, 0) / list.length);
const round2 = (x: number) => Math.round(x * 100) / 100;
const medianRss = (from: number, to: number) => {
  const values = rssSeries.filter((r) => r.done >= from * total && r.done < to * total).map((r) => r.rss).sort((a, b) => a - b);
  return values.length === 0 ? 0 : values[values.length >> 1];
};
const earlyRss = medianRss(0.1, 0.2);
const mb = (bytes: number) => Math.round((bytes / 2 ** 20) * 10) / 10;
// Per thread: the median used and external heap of the tenth after warm-up and of the last tenth,
// and the used heap's 20-point series (the same points as rssSeriesMb).
const heapTrend = (list: readonly HeapPoint[]) => {
  const median = (from: number, to: number, pick: (p: HeapPoint) => number) => {
    const values = list.filter((p) => p.done >= from * total && p.done < to * total).map(pick).sort((a, b) => a - b);
    return values.length === 0 ? 0 : values[values.length >> 1];
  };
  return {
    usedEarlyMb: mb(median(0.1, 0.2, (p) => p.used)),
    usedLateMb: mb(median(0.9, 1.01, (p) => p.used)),
    externalEarlyMb: mb(median(0.1, 0.2, (p) => p.external)),
    externalLateMb: mb(median(0.9, 1.01, (p) => p.external)),
    usedSeriesMb: Array.from({ length: 20 }, (_, i) => list[Math.floor((i * (list.length - 1)) / 19)]).filter((p) => p !== undefined).map((p) => mb(p.used)),
  };
};
const lateRss = medianRss(0.9, 1.01);
const steadyRates = rates.slice(Math.ceil(rates.length / 10)).sort((a, b) => a - b);
const rateQuantile = (q: number) => Math.round(steadyRates[Math.min(steadyRates.length - 1, Math.floor(q * steadyRates.length))] ?? 0);
const report = {
  mode,
  frames: counted,
  cameras: cameraCount,
  ...(slowMs !== undefined && { slowCamera: { camera: 'cam-0', blockedMsPerFrame: slowMs } }),
  ...(youngMb !== undefined && { workerYoungGenerationMb: youngMb }),
  seconds: Math.round(seconds),
  framesPerSecond: Math.round(counted / seconds),
  framesPerSecondByCamera: Object.fromEntries([...frames].map(([id, n]) => [id, Math.round(n / seconds)])),
  rateFirstWindow: Math.round(rates[0] ?? 0),
  rateLastWindow: Math.round(rates.at(-1) ?? 0),
  // CPU time of all threads over wall time: 2 on a 2-core machine kept busy.
  coresUsed: round2((cpu.user + cpu.system) / 1e6 / seconds),
  coresAvailable: availableParallelism(),
  mainThreadUtilization: round2(mainLoop.utilization),
  ...(mode === 'workers' && { workerThreadUtilization: Object.fromEntries([...busy].map(([id, list]) => [id, round2(mean(list))])) }),
  rssAfterWarmupMb: Math.round(warmRss / 2 ** 20),
  rssPeakMb: Math.round(peakRss / 2 ** 20),
  rssPeakGrowthPercent: warmRss > 0 ? Math.round(((peakRss - warmRss) / warmRss) * 1000) / 10 : 0,
  rssEarlyMedianMb: Math.round(earlyRss / 2 ** 20),
  rssLateMedianMb: Math.round(lateRss / 2 ** 20),
  // The target: under 10 %.
  rssGrowthPercent: earlyRss > 0 ? Math.round(((lateRss - earlyRss) / earlyRss) * 1000) / 10 : 0,
  // Frame rate over the windows after the first tenth of the run: 10th, 50th and 90th percentile.
  rateAfterWarmup: { p10: rateQuantile(0.1), p50: rateQuantile(0.5), p90: rateQuantile(0.9) },
  // Resident memory through the run, MB, at 20 evenly spaced points after warm-up (a leak rises
  // steadily; a heap settling to its working size levels off).
  rssSeriesMb: Array.from({ length: 20 }, (_, i) => rssSeries[Math.floor((i * (rssSeries.length - 1)) / 19)]).filter((r) => r !== undefined).map((r) => Math.round(r.rss / 2 ** 20)),
  heaps: Object.fromEntries([...heapSeries].map(([thread, list]) => [thread, heapTrend(list)])),
  samplesStored: samples,
  fileDescriptors: { before: before.fds, after: after.fds },
  activeResources: { before: before.handles, after: after.handles },
  threads: { before: before.threads, after: after.threads },
};
if (!values.json) process.stderr.write('\n');
console.log(values.json ? JSON.stringify(report) : JSON.stringify(report, null, 2));
process.exitCode = report.rssGrowthPercent < 10 && after.fds <= before.fds && after.handles <= before.handles && after.threads <= before.threads ? 0 : 1;
