import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';
import type { CameraConfig } from '../../src/config/loadConfig.ts';
import { createCameraPipeline } from '../../src/counting/cameraPipeline.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { openStore, type Store } from '../../src/store/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import type { Subspace } from '../../src/vision/subspace.ts';

// Our own synthetic reading room (invented data) drives the pipeline; the store is real.
const size = { width: 160, height: 120 };
const scene = createScene('reading-room', size);
let model: Subspace;
beforeAll(() => {
  model = fitSubspace(Array.from({ length: 100 }, (_, i) => scene.emptyFrameAt(i * 30).data), size);
});

const dirs: string[] = [];
const stores: Store[] = [];
function tempStore(): Store {
  const dir = mkdtempSync(join(tmpdir(), 'residuum-pipeline-'));
  dirs.push(dir);
  const store = openStore(join(dir, 'r.db'), { timeZone: 'UTC' });
  stores.push(store);
  return store;
}
afterEach(() => {
  for (const s of stores.splice(0)) s.close();
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

function cameraConfig(overrides: Partial<CameraConfig> = {}): CameraConfig {
  return {
    id: 'cam',
    name: 'Camera',
    source: { kind: 'synthetic', scene: 'reading-room', id: 'cam', size },
    learnSeconds: 2,
    sampleSeconds: 1,
    smoothing: { window: 3, method: 'median' },
    threshold: 3,
    zones: scene.zones.map((z) => (z.id === 'tables' ? { ...z, capacity: 1 } : z)),
    ...overrides,
  };
}

function setup(overrides: Partial<CameraConfig> = {}, withModel = true) {
  const store = tempStore();
  const camera = cameraConfig(overrides);
  store.upsertCamera({ id: camera.id, name: camera.name });
  for (const zone of camera.zones) store.upsertZone(camera.id, zone);
  const learned: Subspace[] = [];
  const pipeline = createCameraPipeline({
    camera,
    store,
    ...(withModel && { model }),
    learn: (frames, s) => fitSubspace(frames, s),
    onModel: (m) => learned.push(m),
  });
  return { store, camera, pipeline, learned };
}

const t0 = Date.UTC(2026, 10, 2, 9, 0, 0);

describe('camera pipeline', () => {
  it('stores one sample per zone and sample period: the mean of the smoothed counts', () => {
    const { store, pipeline, camera } = setup();
    pipeline.handlers.status('online', { at: t0 });
    // 10 frames per second for 5 s of scene time starting at frame 600 (people about).
    for (let i = 0; i <= 50; i++) pipeline.handlers.frame(scene.frameAt(600 + i).frame, t0 + i * 100);
    for (const zone of camera.zones) {
      const samples = store.listSamples({ camera: 'cam', zone: zone.id });
      expect(samples.length).toBe(5);
      for (const s of samples) {
        expect(s.intervalMs).toBe(1000);
        expect(s.kind).toBe('count');
        expect(s.value).toBeGreaterThanOrEqual(0);
      }
      // Contiguous intervals: each starts where the last ended.
      for (let i = 1; i < samples.length; i++) expect(samples[i].time - samples[i].intervalMs).toBe(samples[i - 1].time);
    }
    expect(pipeline.live().state).toBe('online');
  });

  it('records an outage as a gap, never as zero occupancy', () => {
    const { store, pipeline } = setup();
    pipeline.handlers.status('online', { at: t0 });
    for (let i = 0; i <= 20; i++) pipeline.handlers.frame(scene.frameAt(600 + i).frame, t0 + i * 100);
    pipeline.handlers.status('offline', { at: t0 + 2050, reason: 'test outage' });
    // The camera is back after 30 s.
    pipeline.handlers.status('online', { at: t0 + 32_000 });
    for (let i = 0; i <= 20; i++) pipeline.handlers.frame(scene.frameAt(900 + i).frame, t0 + 32_000 + i * 100);
    const samples = store.listSamples({ camera: 'cam', zone: 'tables' });
    expect(samples.length).toBe(4);
    for (const s of samples) {
      const start = s.time - s.intervalMs;
      expect(start >= t0 + 32_000 || s.time <= t0 + 2050).toBe(true);
    }
    const types = store.listEvents({ camera: 'cam' }).map((e) => e.type);
    expect(types).toContain('offline');
    expect(types).toContain('online');
  });

  it('starts a new interval when frames stop for more than two minutes', () => {
    const { store, pipeline } = setup();
    for (let i = 0; i <= 15; i++) pipeline.handlers.frame(scene.frameAt(600 + i).frame, t0 + i * 100);
    for (let i = 0; i <= 15; i++) pipeline.handlers.frame(scene.frameAt(700 + i).frame, t0 + 200_000 + i * 100);
    for (const s of store.listSamples({ camera: 'cam', zone: 'entrance' })) expect(s.intervalMs).toBeLessThanOrEqual(1000);
  });

  it('still samples a slow source that sends a frame every 30 s', () => {
    const { store, pipeline } = setup({ sampleSeconds: 10 });
    for (let i = 0; i < 6; i++) pipeline.handlers.frame(scene.frameAt(600 + i * 300).frame, t0 + i * 30_000);
    const samples = store.listSamples({ camera: 'cam', zone: 'tables' });
    expect(samples.length).toBe(5);
    for (const s of samples) expect(s.intervalMs).toBe(30_000);
  });

  it('keeps a bounded number of frames while learning for a long time', () => {
    const { pipeline, learned } = setup({ learnSeconds: 120 }, false);
    // 10 frames a second for 2 minutes: 1200 frames seen, at most 480 kept.
    for (let i = 0; i <= 1200; i++) pipeline.handlers.frame(scene.emptyFrameAt((i * 7) % 3000), t0 + i * 100);
    expect(learned.length).toBe(1);
    expect(learned[0].frameCount).toBeLessThanOrEqual(480);
    expect(learned[0].frameCount).toBeGreaterThan(200);
  });

  it('flags a changed view instead of counting a crowd, and logs capacity exceeded', () => {
    const { store, pipeline } = setup();
    let t = t0;
    // Find frames with more than one person at the tables (capacity 1).
    for (let i = 0; i < 30; i++, t += 100) pipeline.handlers.frame(scene.frameAt(1000 + i).frame, t);
    const bright = scene.emptyFrameAt(1100).data.map((v) => Math.min(255, v * 0.4 + 120));
    for (let i = 0; i < 25; i++, t += 100) pipeline.handlers.frame({ ...size, data: bright }, t);
    expect(pipeline.live().viewChanged).toBe(true);
    const events = store.listEvents({ camera: 'cam' });
    expect(events.map((e) => e.type)).toContain('view-changed');
    const flagged = store.listSamples({ camera: 'cam', zone: 'tables' }).filter((s) => s.quality & 1);
    expect(flagged.length).toBeGreaterThan(0);
    // The scene has more than one person at the tables then (more than its capacity of 1).
    expect(scene.frameAt(1010).truth.tables.count).toBeGreaterThan(1);
    expect(events.some((e) => e.type === 'capacity-exceeded' && e.zone === 'tables')).toBe(true);
  });

  it('learns from the live source when it has no model, then counts', () => {
    const { store, pipeline, learned } = setup({ learnSeconds: 2 }, false);
    let t = t0;
    for (let i = 0; i < 25; i++, t += 100) pipeline.handlers.frame(scene.emptyFrameAt(i * 120), t);
    expect(learned.length).toBe(1);
    expect(pipeline.model()).toBeDefined();
    expect(pipeline.learnStatus().state).toBe('done');
    for (let i = 0; i < 15; i++, t += 100) pipeline.handlers.frame(scene.frameAt(600 + i).frame, t);
    expect(store.listSamples({ camera: 'cam', zone: 'tables' }).length).toBeGreaterThan(0);
  });

  // What SQLite answers when the disk is full and when its file or filesystem became read-only
  // under it (result codes SQLITE_FULL and SQLITE_READONLY, better-sqlite3 puts them on
  // error.code; messages as sqlite3_errstr gives them, recalled from memory).
  it.each([
    ['a full disk', 'SQLITE_FULL', 'database or disk is full'],
    ['a database that turned read-only', 'SQLITE_READONLY', 'attempt to write a readonly database'],
  ])('keeps counting through %s and stores the backlog when writing works again', (_, code, message) => {
    const { store, camera } = setup();
    let failing = true;
    const logs: string[] = [];
    const faulty = new Proxy(store, {
      get(target, key, receiver) {
        if (key === 'insertSamples' && failing) {
          return () => {
            throw Object.assign(new Error(message), { code });
          };
        }
        const value = Reflect.get(target, key, receiver);
        return typeof value === 'function' ? value.bind(target) : value;
      },
    });
    const pipeline = createCameraPipeline({ camera, store: faulty, model, log: (l) => logs.push(l) });
    let t = t0;
    for (let i = 0; i <= 40; i++, t += 100) pipeline.handlers.frame(scene.frameAt(600 + i).frame, t);
    expect(store.listSamples({ camera: 'cam', zone: 'tables' })).toEqual([]);
    expect(pipeline.live().state).toBe('online');
    expect(logs.some((l) => l.includes(`cannot write the database (${message}); keeping samples in memory`))).toBe(true);
    failing = false;
    for (let i = 0; i <= 12; i++, t += 100) pipeline.handlers.frame(scene.frameAt(650 + i).frame, t);
    const stored = store.listSamples({ camera: 'cam', zone: 'tables' });
    expect(stored.length).toBe(5);
    for (let i = 1; i < stored.length; i++) expect(stored[i].time - stored[i].intervalMs).toBe(stored[i - 1].time);
    expect(logs.filter((l) => /writable again/.test(l))).toEqual([expect.stringMatching(/stored 12 samples from the backlog/)]);
  });

  it('applies new zones at once', () => {
    const { pipeline } = setup();
    pipeline.handlers.frame(scene.frameAt(600).frame, t0);
    pipeline.setZones([{ id: 'whole', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] }]);
    pipeline.handlers.frame(scene.frameAt(601).frame, t0 + 100);
    expect(pipeline.live().zones.map((z) => z.id)).toEqual(['whole']);
  });
});
