import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startService, type RunningService } from '../../src/commands/run.ts';
import { loadConfig } from '../../src/config/loadConfig.ts';
import { waitUntil } from '../service/waitUntil.ts';
import { jsonOf, startTestService, type TestService } from './testService.ts';

// Adding a camera from the dashboard: a local HTTP server plays the camera (flat grey pictures of
// our own making, a web page, a missing page); the service is the real one.

let camera: Server;
let cameraBase: string;
let svc: TestService;
let restarted: RunningService | undefined;

beforeAll(async () => {
  const picture = (width: number, height: number) => sharp({ create: { width, height, channels: 3, background: { r: 120, g: 110, b: 100 } } }).jpeg().toBuffer();
  const fourThree = await picture(640, 480);
  const wide = await picture(640, 360);
  camera = createServer((req, res) => {
    const path = new URL(req.url ?? '/', 'http://camera').pathname;
    if (path === '/snap.jpg') return void res.writeHead(200, { 'content-type': 'image/jpeg' }).end(fourThree);
    if (path === '/wide.jpg') return void res.writeHead(200, { 'content-type': 'image/jpeg' }).end(wide);
    if (path === '/login') return void res.writeHead(200, { 'content-type': 'text/html' }).end('<html><body>Please log in</body></html>');
    res.writeHead(404, { 'content-type': 'text/plain' }).end('not found');
  });
  await new Promise<void>((done) => camera.listen(0, '127.0.0.1', done));
  cameraBase = `http://127.0.0.1:${(camera.address() as AddressInfo).port}`;
  svc = await startTestService();
}, 120_000);

afterAll(async () => {
  await restarted?.stop();
  await svc?.stop();
  await new Promise<void>((done) => camera.close(() => done()));
});

function post(body: unknown, key: string | null = svc.adminKey, base = svc.base): Promise<Response> {
  return fetch(`${base}/api/cameras`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', ...(key !== null && { authorization: `Bearer ${key}` }) },
    body: JSON.stringify(body),
  });
}

async function error(res: Response): Promise<string> {
  return ((await jsonOf(res)) as { error: string }).error;
}

describe('POST /api/cameras', () => {
  it('needs the admin key', async () => {
    const res = await post({ id: 'side', source: { kind: 'snapshot', url: `${cameraBase}/snap.jpg` } }, null);
    expect(res.status).toBe(401);
  });

  it('answers 400 naming the field for a body it cannot take', async () => {
    const cases: [unknown, RegExp][] = [
      [{ id: 'side', source: { kind: 'drop-folder', path: '/tmp' } }, /^request body: source\.kind must be snapshot .* or mjpeg .*, got "drop-folder"; other kinds of source go in the configuration file$/],
      [{ id: 'side', source: { kind: 'snapshot', url: 'ftp://camera/snap.jpg' } }, /^request body: source\.url must be an http: or https: URL, got "ftp:\/\/camera\/snap\.jpg"$/],
      [{ id: 'side', source: { kind: 'snapshot' } }, /^request body: source\.url must be non-empty text, got nothing$/],
      [{ id: 'no spaces', source: { kind: 'snapshot', url: `${cameraBase}/snap.jpg` } }, /^request body: id must be 1–64 letters, digits/],
      [{ id: 'side', model: '/etc/passwd', source: { kind: 'snapshot', url: `${cameraBase}/snap.jpg` } }, /^request body: model is not expected here/],
      [{ id: 'side', source: { kind: 'snapshot', url: `${cameraBase}/snap.jpg` }, size: [320] }, /^request body: size must be \[width, height\]/],
    ];
    for (const [body, message] of cases) {
      const res = await post(body);
      expect(res.status, JSON.stringify(body)).toBe(400);
      expect(await error(res)).toMatch(message);
    }
  });

  it('checks the source before saving it: unreachable, missing, not a picture, another shape', async () => {
    // A port nobody listens on (the camera server's, after a fresh server was closed there, is not
    // guaranteed free; 9 is the discard port, closed on a test machine: common practice).
    const refused = await post({ id: 'side', source: { kind: 'snapshot', url: 'http://127.0.0.1:9/snap.jpg' } });
    expect(refused.status).toBe(400);
    expect(await error(refused)).toMatch(/^request body: source\.url gives no usable picture: .*ECONNREFUSED/);
    const missing = await post({ id: 'side', source: { kind: 'snapshot', url: `${cameraBase}/nothing.jpg` } });
    expect(await error(missing)).toMatch(/^request body: source\.url gives no usable picture: .*HTTP 404/);
    const page = await post({ id: 'side', source: { kind: 'snapshot', url: `${cameraBase}/login` } });
    expect(await error(page)).toMatch(/^request body: source\.url gives no usable picture: .*text\/html/);
    const shape = await post({ id: 'side', size: [320, 240], source: { kind: 'snapshot', url: `${cameraBase}/wide.jpg` } });
    expect(shape.status).toBe(400);
    expect(await error(shape)).toMatch(/the camera sends 640×360 pictures: send size \[320, 180\] or leave size out/);
    // Nothing of it was kept.
    expect(svc.service.store.getSetting('cameras.added')).toBeUndefined();
    expect(svc.service.cameras.has('side')).toBe(false);
  });

  it('adds a camera that gives pictures, starts it at once, and keeps it over a restart; removes it again', async () => {
    const res = await post({ id: 'side', name: 'Side entrance', learnSeconds: 2, source: { kind: 'snapshot', url: `${cameraBase}/wide.jpg?token=abc`, intervalMs: 200 } });
    expect(res.status, await res.clone().text()).toBe(201);
    const { camera: added } = (await jsonOf(res)) as { camera: Record<string, unknown> };
    // Without size the working size follows the camera's shape: 640×360 → 320×180 (long side 320, as `learn`).
    expect(added).toMatchObject({ id: 'side', name: 'Side entrance', kind: 'snapshot', url: `${cameraBase}/wide.jpg?token=***`, size: [320, 180], sourceSize: [640, 360], learnSeconds: 2 });
    expect(JSON.stringify(added)).not.toContain('abc');
    // Running: it learns the empty scene from its first seconds, in the live view beside the configured camera.
    const live = await waitUntil(
      async () => {
        const body = (await jsonOf(await fetch(`${svc.base}/api/live`))) as { cameras: { camera: string; status: string }[] };
        const side = body.cameras.find((c) => c.camera === 'side');
        return side && side.status !== 'connecting' ? body : undefined;
      },
      { what: 'the added camera in the live view', timeoutMs: 30_000 },
    );
    expect(live.cameras.map((c) => c.camera).sort()).toEqual(['reading-room', 'side']);
    expect(['learning', 'counting']).toContain(live.cameras.find((c) => c.camera === 'side')!.status);
    expect(svc.service.store.listEvents({ camera: 'side', type: 'settings-changed' })).toMatchObject([{ detail: { what: 'camera-added', by: 'admin', kind: 'snapshot' } }]);

    // The same id again, or a configured camera's: 409.
    expect((await post({ id: 'side', source: { kind: 'snapshot', url: `${cameraBase}/snap.jpg` } })).status).toBe(409);
    expect((await post({ id: 'reading-room', source: { kind: 'snapshot', url: `${cameraBase}/snap.jpg` } })).status).toBe(409);

    // A restart: the added camera runs again.
    await svc.service.stop();
    restarted = await startService(loadConfig(svc.configFile), { dataDir: svc.dataDir, port: 0 });
    expect([...restarted.cameras.keys()].sort()).toEqual(['reading-room', 'side']);
    const base = `http://127.0.0.1:${restarted.port}`;
    const del = (id: string) => fetch(`${base}/api/cameras/${id}`, { method: 'DELETE', headers: { authorization: `Bearer ${svc.adminKey}` } });
    expect((await del('reading-room')).status).toBe(409);
    expect(await error(await del('reading-room'))).toBe('camera "reading-room" comes from the configuration file; remove it there');
    expect((await del('nobody')).status).toBe(404);
    const removed = await del('side');
    expect(removed.status).toBe(200);
    expect([...restarted.cameras.keys()]).toEqual(['reading-room']);
    const cameras = (await jsonOf(await fetch(`${base}/api/cameras`))) as { cameras: { id: string }[] };
    expect(cameras.cameras.map((c) => c.id)).toEqual(['reading-room']);
    await restarted.stop();
    restarted = await startService(loadConfig(svc.configFile), { dataDir: svc.dataDir, port: 0 });
    expect([...restarted.cameras.keys()]).toEqual(['reading-room']);
  }, 180_000);
});
