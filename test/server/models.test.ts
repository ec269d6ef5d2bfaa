import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startService } from '../../src/commands/run.ts';
import { loadConfig } from '../../src/config/loadConfig.ts';
import { storeModel } from '../../src/counting/storeModel.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { mulberry } from '../helpers/random.ts';
import { waitUntil } from '../service/waitUntil.ts';
import { jsonOf, startTestService, type TestService } from './testService.ts';

// The kept models of a camera and the admin's roll-back, over HTTP, on the real service with the
// synthetic reading room (our invented scene, speed 10, 160×120).
let t: TestService;
const CAMERA = 'reading-room';
const size = { width: 160, height: 120 };
let firstId: number;
let quietId: number;
let noiseId: number;
let smallId: number;

beforeAll(async () => {
  t = await startTestService();
  const store = t.service.store;
  firstId = store.activeModelId(CAMERA)!;
  const scene = createScene('reading-room', size);
  // Kept as if learned before: another good model of the empty room, and a rejected one learned from noise.
  const quiet = fitSubspace(Array.from({ length: 60 }, (_, i) => scene.emptyFrameAt(i * 50 + 7).data), size);
  quietId = storeModel(store, CAMERA, quiet, 'live source', { activate: false });
  const random = mulberry(5);
  const noise = fitSubspace(Array.from({ length: 40 }, () => Float32Array.from({ length: size.width * size.height }, () => Math.floor(random() * 256))), size);
  noiseId = storeModel(store, CAMERA, noise, 'live source', { activate: false, rejected: true });
  // One learned at another working size (the configuration's size was changed since).
  const small = createScene('reading-room', { width: 80, height: 60 });
  smallId = storeModel(store, CAMERA, fitSubspace(Array.from({ length: 20 }, (_, i) => small.emptyFrameAt(i * 100).data), small), 'live source', { activate: false });
});
afterAll(async () => {
  await t?.stop();
});

const admin = () => ({ Authorization: `Bearer ${t.adminKey}` });
const list = () => fetch(`${t.base}/api/cameras/${CAMERA}/models`, { headers: admin() });
const activate = (camera: string, model: string | number, headers: Record<string, string> = admin()) =>
  fetch(`${t.base}/api/cameras/${camera}/models/${model}/activate`, { method: 'POST', headers });

interface LiveCamera {
  camera: string;
  modelId?: number;
  lastFrameAt?: number;
  zones: { id: string; count: number }[];
}
async function liveCamera(): Promise<LiveCamera> {
  return (await jsonOf(await fetch(`${t.base}/api/live`))).cameras.find((c: LiveCamera) => c.camera === CAMERA);
}

describe('kept models', () => {
  it('need the admin key, to list and to choose (401 without, 401 for a wrong one)', async () => {
    for (const res of [
      await fetch(`${t.base}/api/cameras/${CAMERA}/models`),
      await activate(CAMERA, quietId, {}),
      await fetch(`${t.base}/api/cameras/${CAMERA}/models`, { headers: { Authorization: `Bearer ${'B'.repeat(43)}` } }),
    ]) {
      expect(res.status).toBe(401);
      expect((await jsonOf(res)).error).toMatch(/key/);
    }
    expect(t.service.store.activeModelId(CAMERA)).toBe(firstId);
  });

  it('GET lists them newest first with figures, verdict and flags, and no pixels', async () => {
    const res = await list();
    expect(res.status).toBe(200);
    expect(res.headers.get('cache-control')).toBe('no-store');
    const text = await res.text();
    const body = JSON.parse(text);
    expect(body.camera).toBe(CAMERA);
    expect(body.models.map((m: { id: number }) => m.id)).toEqual([smallId, noiseId, quietId, firstId]);
    for (const m of body.models) {
      expect(Object.keys(m).sort()).toEqual(['active', 'components', 'frames', 'height', 'id', 'learnedAt', 'rejected', 'source', 'verdict', 'width']);
      expect(Object.keys(m.verdict).sort()).toEqual(['findings', 'level']);
      expect(m.verdict.findings.length).toBeGreaterThan(0);
      for (const f of m.verdict.findings) expect(typeof f).toBe('string');
    }
    const byId = new Map(body.models.map((m: { id: number }) => [m.id, m]));
    expect(byId.get(firstId)).toMatchObject({ active: true, rejected: false, frames: 200, width: 160, height: 120, source: 'synthetic:reading-room:empty' });
    expect(byId.get(noiseId)).toMatchObject({ active: false, rejected: true, frames: 40, verdict: { level: 'poor' } });
    expect(byId.get(quietId)).toMatchObject({ active: false, rejected: false, frames: 60 });
    // Never pixels: four models of 160×120 (19 200 floats each, times 2 + components) would be
    // megabytes; the list is a few hundred bytes a model.
    expect(text.length).toBeLessThan(4 * 1500);
  });

  it('404 names the unknown camera or model', async () => {
    const cases: [string, string | number, RegExp][] = [
      ['no-such-camera', quietId, /^no camera "no-such-camera"$/],
      [CAMERA, 999_999, /^camera "reading-room" has no model "999999"$/],
      [CAMERA, 'abc', /^camera "reading-room" has no model "abc"$/],
      [CAMERA, 0, /^camera "reading-room" has no model "0"$/],
    ];
    for (const [camera, model, message] of cases) {
      const res = await activate(camera, model);
      expect(res.status, `${camera}/${model}`).toBe(404);
      expect((await jsonOf(res)).error).toMatch(message);
    }
    const res = await fetch(`${t.base}/api/cameras/nope/models`, { headers: admin() });
    expect(res.status).toBe(404);
    expect((await jsonOf(res)).error).toBe('no camera "nope"');
    expect(t.service.store.activeModelId(CAMERA)).toBe(firstId);
  });

  it('409 for a model of another working size; nothing changes', async () => {
    const res = await activate(CAMERA, smallId);
    expect(res.status).toBe(409);
    expect((await jsonOf(res)).error).toBe(`model ${smallId} was learned at 80×60 but camera ${CAMERA} works at 160×120`);
    expect(t.service.store.activeModelId(CAMERA)).toBe(firstId);
  });

  it('POST activate switches the camera\'s thread to the chosen model without a restart, and back', async () => {
    const restarts = t.service.cameras.get(CAMERA)!.restarts;
    await waitUntil(async () => (await liveCamera()).zones.some((z) => z.count > 0), { what: 'people counted with the first model' });

    // The rejected model of noise: chosen anyway (an admin may), its noise map so wide that nobody stands out.
    const res = await activate(CAMERA, noiseId);
    expect(res.status).toBe(200);
    const body = await jsonOf(res);
    expect(body).toMatchObject({ camera: CAMERA, changed: true, model: { id: noiseId, active: true, rejected: true } });
    expect(t.service.store.activeModelId(CAMERA)).toBe(noiseId);
    // The camera's worker reports the model it counts with, and counts nobody with it.
    await waitUntil(async () => {
      const c = await liveCamera();
      return c.modelId === noiseId && c.zones.every((z) => z.count === 0);
    }, { what: 'the worker counting with the noise model' });
    const events = t.service.store.listEvents({ camera: CAMERA, type: 'model-activated' });
    expect(events.at(-1)?.detail).toMatchObject({ model: noiseId, by: 'admin', previous: firstId });
    expect((events.at(-1)?.detail as { text: string }).text).toMatch(new RegExp(`^Model ${noiseId}, learned .+, was put to use by the admin instead of model ${firstId}\\.$`));
    // GET learn shows the model in use.
    expect((await jsonOf(await fetch(`${t.base}/api/cameras/${CAMERA}/learn`))).model.id).toBe(noiseId);

    // Choosing it again changes nothing and stores no event.
    const again = await jsonOf(await activate(CAMERA, noiseId));
    expect(again.changed).toBe(false);
    expect(t.service.store.listEvents({ camera: CAMERA, type: 'model-activated' })).toHaveLength(events.length);

    // Back to the first: people are counted again.
    expect((await activate(CAMERA, firstId)).status).toBe(200);
    await waitUntil(async () => {
      const c = await liveCamera();
      return c.modelId === firstId && c.zones.some((z) => z.count > 0);
    }, { what: 'the worker counting people with the first model again' });
    expect(t.service.cameras.get(CAMERA)!.restarts).toBe(restarts);
    const listed = (await jsonOf(await list())).models;
    expect(listed.filter((m: { active: boolean }) => m.active).map((m: { id: number }) => m.id)).toEqual([firstId]);
  });

  it('a restart counts with the model the admin chose', async () => {
    expect((await activate(CAMERA, quietId)).status).toBe(200);
    await t.service.stop();
    const again = await startService(loadConfig(t.configFile), { dataDir: t.dataDir, port: 0 });
    try {
      const host = again.cameras.get(CAMERA)!;
      expect(host.modelId()).toBe(quietId);
      expect(host.model()?.frameCount).toBe(60);
      // All four models are still kept (models.keep is 5 by default).
      expect(again.store.listModels(CAMERA).map((m) => m.id)).toEqual([firstId, quietId, noiseId, smallId]);
    } finally {
      await again.stop();
    }
  });
});
