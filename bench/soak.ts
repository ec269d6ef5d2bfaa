// `npm run soak [-- --frames N] [--cameras C]`: runs C camera pipelines (default 4) over the
// synthetic scenes as fast as they go, N frames in all (default 200 000), writing samples to a
// temporary database, and reports frame rate, resident memory growth after warm-up, open file
// descriptors and active handles/timers before and after. Not part of `npm test`.
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import type { CameraConfig } from '../src/config/loadConfig.ts';
import { createCameraPipeline } from '../src/counting/cameraPipeline.ts';
import { createScene, type SceneId } from '../src/frames/synthetic/index.ts';
import { openStore } from '../src/store/index.ts';
import { fitSubspace } from '../src/vision/fitSubspace.ts';

const { values } = parseArgs({ options: { frames: { type: 'string' }, cameras: { type: 'string' }, json: { type: 'boolean' } } });
const total = Number(values.frames ?? 200_000);
const cameraCount = Number(values.cameras ?? 4);
const dir = mkdtempSync(join(tmpdir(), 'residuum-soak-'));
const store = openStore(join(dir, 'soak.db'), { timeZone: 'UTC' });
const fds = () => readdirSync('/proc/self/fd').length;
const handles = () => process.getActiveResourcesInfo().length;

const cameras = Array.from({ length: cameraCount }, (_, c) => {
  const id = (c % 2 === 0 ? 'reading-room' : 'stock-room') as SceneId;
  const scene = createScene(id, { seed: c + 1 });
  const model = fitSubspace(Array.from({ length: 100 }, (_, i) => scene.emptyFrameAt(i * 30).data), scene, { components: 8 });
  const config: CameraConfig = {
    id: `cam-${c}`,
    name: `Camera ${c}`,
    source: { kind: 'synthetic', scene: id, id: `cam-${c}`, size: { width: scene.width, height: scene.height } },
    learnSeconds: 30,
    sampleSeconds: 10,
    smoothing: { window: 5, method: 'median' },
    threshold: 3,
    zones: scene.zones,
  };
  store.upsertCamera({ id: config.id, name: config.name });
  for (const zone of config.zones) store.upsertZone(config.id, zone);
  return { scene, pipeline: createCameraPipeline({ camera: config, store, model }) };
});

const before = { fds: fds(), handles: handles() };
const t0 = Date.UTC(2026, 0, 1);
const perCamera = Math.ceil(total / cameraCount);
const warmup = Math.min(2000, Math.floor(perCamera / 10));
let warmRss = 0;
let peakRss = 0;
const rates: number[] = [];
let windowStart = performance.now();
const started = performance.now();
for (let i = 0; i < perCamera; i++) {
  for (const { scene, pipeline } of cameras) pipeline.handlers.frame(scene.frameAt(i % 36000).frame, t0 + i * 100);
  if (i === warmup) {
    global.gc?.();
    warmRss = process.memoryUsage().rss;
  }
  if (i > warmup) peakRss = Math.max(peakRss, process.memoryUsage().rss);
  if ((i + 1) % 1000 === 0) {
    const now = performance.now();
    rates.push((1000 * cameraCount) / ((now - windowStart) / 1000));
    windowStart = now;
    if (!values.json) process.stderr.write(`\r${(i + 1) * cameraCount} frames, ${rates.at(-1)!.toFixed(0)} frames/s`);
    await new Promise((done) => setImmediate(done));
  }
}
const seconds = (performance.now() - started) / 1000;
for (const { pipeline } of cameras) pipeline.stop();
const samples = (store.db.prepare('select count(*) as n from samples').get() as { n: number }).n;
store.close();
rmSync(dir, { recursive: true, force: true });
const after = { fds: fds(), handles: handles() };
const report = {
  frames: perCamera * cameraCount,
  cameras: cameraCount,
  seconds: Math.round(seconds),
  framesPerSecond: Math.round((perCamera * cameraCount) / seconds),
  rateFirstWindow: Math.round(rates[0] ?? 0),
  rateLastWindow: Math.round(rates.at(-1) ?? 0),
  rssAfterWarmupMb: Math.round(warmRss / 2 ** 20),
  rssPeakMb: Math.round(peakRss / 2 ** 20),
  rssGrowthPercent: warmRss > 0 ? Math.round(((peakRss - warmRss) / warmRss) * 1000) / 10 : 0,
  samplesStored: samples,
  fileDescriptors: { before: before.fds, after: after.fds },
  activeResources: { before: before.handles, after: after.handles },
};
if (!values.json) process.stderr.write('\n');
console.log(values.json ? JSON.stringify(report) : JSON.stringify(report, null, 2));
process.exitCode = report.rssGrowthPercent < 10 && after.fds <= before.fds && after.handles <= before.handles ? 0 : 1;
