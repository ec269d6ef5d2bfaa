import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, sep } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import { afterAll, describe, expect, it } from 'vitest';
import type { CameraConfig } from '../../src/counting/cameraConfig.ts';
import type { CameraWorkerData, FromWorker } from '../../src/counting/cameraWorkerProtocol.ts';
import { learnInWorker } from '../../src/counting/learnInWorker.ts';
import { shareModel } from '../../src/counting/shareModel.ts';
import { sharedMask } from '../../src/counting/sharedMask.ts';
import { prepareWorkers } from '../../src/counting/startWorker.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { openStore } from '../../src/store/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';

// The project's own workers from their bundle, in plain worker threads without the TypeScript
// loader: the synthetic stock room (our invented scene) at 80×60.

const dir = mkdtempSync(join(tmpdir(), 'residuum-start-worker-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const scene = createScene('stock-room', { width: 80, height: 60 });
const frames = () => Array.from({ length: 30 }, (_, i) => scene.emptyFrameAt(i * 75).data);

async function bundle(): Promise<string> {
  const loading = await prepareWorkers();
  if (!('bundle' in loading)) throw new Error(`expected a bundle: ${loading.loader}`);
  return loading.bundle;
}

describe('startWorker', () => {
  it('prepares a bundle of both workers in node_modules/.cache, with no TypeScript source imported', async () => {
    const at = await bundle();
    expect(at).toContain(`${sep}node_modules${sep}.cache${sep}residuum-workers${sep}`);
    for (const name of ['cameraWorker', 'learnWorker']) {
      const text = readFileSync(join(at, `${name}.mjs`), 'utf8');
      expect(text).not.toMatch(/from ["'][^"']*\.ts["']/);
      expect(text).not.toMatch(/import\(["'][^"']*\.ts["']\)/);
    }
  });

  it('learns from the bundle the same model as the main thread (learning.wasm found beside its source)', async () => {
    const at = await bundle();
    const direct = fitSubspace(frames(), scene, { components: 3 });
    // Through startWorker, as the service learns, and straight from the bundle file.
    const viaStart = await learnInWorker(frames(), scene, { components: 3 });
    const plain = await new Promise<{ model: typeof direct }>((resolve, reject) => {
      const worker = new Worker(pathToFileURL(join(at, 'learnWorker.mjs')), { workerData: { frames: frames(), size: { width: 80, height: 60 }, options: { components: 3 } } });
      worker.once('message', (message) => {
        resolve(message as { model: typeof direct });
        void worker.terminate();
      });
      worker.once('error', reject);
    });
    for (const model of [viaStart, plain.model]) {
      expect(Array.from(model.mean)).toEqual(Array.from(direct.mean));
      expect(Array.from(model.basis)).toEqual(Array.from(direct.basis));
    }
  });

  it('counts a camera from the bundle (counting.wasm found beside its source) and stops on request', async () => {
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
    const dbFile = join(dir, 'bundle.db');
    const store = openStore(dbFile, { timeZone: 'UTC' });
    store.upsertCamera({ id: camera.id, name: camera.name });
    store.upsertZone(camera.id, camera.zones[0]);
    store.close();
    const data: CameraWorkerData = {
      camera,
      zonesVersion: 0,
      dbFile,
      timeZone: 'UTC',
      model: shareModel(fitSubspace(frames(), scene, { components: 3 })),
      keepModels: 5,
      mask: sharedMask(camera.source.size).buffer,
      relayCommits: false,
      heartbeatMs: 1000,
    };
    const worker = new Worker(pathToFileURL(join(await bundle(), 'cameraWorker.mjs')), { workerData: data });
    const seen: FromWorker[] = [];
    try {
      await new Promise<void>((resolve, reject) => {
        worker.on('message', (message: FromWorker) => {
          seen.push(message);
          if (message.type === 'live' && message.live.lastFrameAt !== undefined) resolve();
        });
        worker.once('error', reject);
        worker.once('exit', (code) => reject(new Error(`the worker stopped (exit code ${code}) before counting a frame`)));
      });
      const counted = seen.find((m) => m.type === 'live' && m.live.lastFrameAt !== undefined);
      expect(counted?.type === 'live' && counted.live.zones.map((z) => z.id)).toEqual(['all']);
      const stopped = new Promise<void>((resolve) => worker.on('message', (m: FromWorker) => m.type === 'stopped' && resolve()));
      worker.postMessage({ type: 'stop' });
      await stopped;
    } finally {
      await worker.terminate();
    }
  });
});

