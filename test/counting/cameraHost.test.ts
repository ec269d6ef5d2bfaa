import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { CameraConfig } from '../../src/config/loadConfig.ts';
import { createCameraHost } from '../../src/counting/cameraHost.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import type { EventInput } from '../../src/store/events.ts';
import { storeModel } from '../../src/counting/storeModel.ts';
import { openStore } from '../../src/store/index.ts';
import type { Sample } from '../../src/store/samples.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { waitUntil } from '../service/waitUntil.ts';

// One camera's worker on its own (the service tests are in test/commands/runWorkers.test.ts):
// the synthetic stock room (our invented scene) at 80×60.

const dir = mkdtempSync(join(tmpdir(), 'residuum-host-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const scene = createScene('stock-room', { width: 80, height: 60 });
const camera: CameraConfig = {
  id: 'shelf',
  name: 'Shelf',
  source: { kind: 'synthetic', scene: 'stock-room', id: 'shelf', size: { width: 80, height: 60 }, speed: 20 },
  learnSeconds: 30,
  sampleSeconds: 1,
  smoothing: { window: 3, method: 'median' },
  threshold: 3,
  zones: [{ id: 'all', kind: 'shelf', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] }],
};

describe('createCameraHost', () => {
  it('rejects ready() naming the camera when its first worker cannot start, and does not retry', async () => {
    const notAFolder = join(dir, 'plain-file');
    writeFileSync(notAFolder, 'not a folder');
    const events: EventInput[] = [];
    const host = createCameraHost({ camera, dbFile: join(notAFolder, 'data', 'residuum.db'), timeZone: 'UTC', events: { insertEvent: (e) => events.push(e) } });
    await expect(host.ready()).rejects.toThrow(/^camera shelf: its worker could not start: crashed \(cannot open store .*plain-file/);
    expect(host.running).toBe(false);
    expect(host.restarts).toBe(0);
    expect(events).toEqual([]);
    await host.stop();
  });

  it('relays only what the store committed: every relayed sample is in the database as relayed', async () => {
    const dbFile = join(dir, 'relay.db');
    const store = openStore(dbFile, { timeZone: 'UTC' });
    store.upsertCamera({ id: camera.id, name: camera.name });
    store.upsertZone(camera.id, camera.zones[0]);
    const model = fitSubspace(Array.from({ length: 40 }, (_, i) => scene.emptyFrameAt(i * 75).data), scene, { components: 4 });
    const relayed: Sample[] = [];
    // With a bounded young generation, as the service may start its workers.
    const host = createCameraHost({ camera, dbFile, timeZone: 'UTC', model, relayCommits: true, events: store, youngGenerationMb: 4 });
    host.on('sample', (s: Sample) => relayed.push(s));
    try {
      await host.ready();
      await waitUntil(() => relayed.length >= 3, { what: 'three relayed samples' });
      const stored = store.listSamples({ camera: camera.id, zone: 'all' });
      for (const s of relayed) expect(stored.find((t) => t.time === s.time)).toMatchObject({ value: s.value, intervalMs: s.intervalMs, kind: 'fill' });
      // The model counted with is the one given (its figures), and the host shares it with the worker.
      expect(host.model()?.components).toBe(4);
      expect(host.model()?.mean.buffer).toBeInstanceOf(SharedArrayBuffer);
      expect(host.utilization()).toBeGreaterThanOrEqual(0);
      // The worker's own heap, from its heartbeats (one a second; three samples took over two).
      await waitUntil(() => host.heap() !== undefined, { what: 'a heartbeat with the heap' });
      const heap = host.heap()!;
      expect(heap.usedBytes).toBeGreaterThan(0);
      expect(heap.totalBytes).toBeGreaterThanOrEqual(heap.usedBytes);
      expect(heap.externalBytes).toBeGreaterThanOrEqual(0);
    } finally {
      await host.stop();
      store.close();
    }
    expect(host.live().state).toBe('stopped');
    expect(host.heap()).toBeUndefined();
  });

  it('names the option for a watchdog shorter than two heartbeats', () => {
    expect(() => createCameraHost({ camera, dbFile: ':memory:', timeZone: 'UTC', events: { insertEvent: () => 0 }, stallMs: 500, heartbeatMs: 1000 })).toThrow(/^stallMs: expected 0 or at least two heartbeats \(2000 ms\), got 500$/);
    expect(() => createCameraHost({ camera, dbFile: ':memory:', timeZone: 'UTC', events: { insertEvent: () => 0 }, youngGenerationMb: 0.5 })).toThrow(/^youngGenerationMb: expected MB ≥ 1, got 0.5$/);
    expect(() => createCameraHost({ camera, dbFile: ':memory:', timeZone: 'UTC', events: { insertEvent: () => 0 }, keepModels: 0 })).toThrow(/^keepModels: expected a whole number from 1 to 10 000, got 0$/);
  });

  it('switches the worker to another model without a restart (an admin\'s roll-back): the worker reports the model it counts with', async () => {
    const dbFile = join(dir, 'switch.db');
    const store = openStore(dbFile, { timeZone: 'UTC' });
    store.upsertCamera({ id: camera.id, name: camera.name });
    store.upsertZone(camera.id, camera.zones[0]);
    const first = fitSubspace(Array.from({ length: 40 }, (_, i) => scene.emptyFrameAt(i * 75).data), scene, { components: 4 });
    const other = fitSubspace(Array.from({ length: 40 }, (_, i) => scene.emptyFrameAt(i * 75 + 30).data), scene, { components: 2 });
    const firstId = storeModel(store, camera.id, first, 'test');
    const otherId = storeModel(store, camera.id, other, 'test', { activate: false });
    const host = createCameraHost({ camera, dbFile, timeZone: 'UTC', model: first, modelId: firstId, events: store });
    const switched: (number | undefined)[] = [];
    host.on('model', (_model, id?: number) => switched.push(id));
    try {
      await host.ready();
      await waitUntil(() => host.live().modelId === firstId && host.live().lastFrameAt, { what: 'a frame counted with the first model' });
      const restarts = host.restarts;
      host.useModel(other, otherId);
      // The main thread's mirror follows at once (the empty-scene picture, the figures) …
      expect(host.model()?.components).toBe(2);
      expect(host.modelId()).toBe(otherId);
      // … and the worker, counting on in the same thread, reports the model it counts with.
      const since = host.live().lastFrameAt!;
      await waitUntil(() => host.live().modelId === otherId && host.live().lastFrameAt! > since, { what: 'the worker counting with the other model' });
      await waitUntil(() => switched.length >= 2, { what: 'the worker echoing the switch' });
      expect(switched).toEqual([otherId, otherId]);
      expect(host.restarts).toBe(restarts);
      expect(host.running).toBe(true);
      expect(() => host.useModel(fitSubspace(Array.from({ length: 3 }, (_, i) => new Float32Array(40 * 30).fill(i)), { width: 40, height: 30 }), 7)).toThrow(/^the model is 40×30 but camera shelf works at 80×60$/);
    } finally {
      await host.stop();
      store.close();
    }
  });
});
