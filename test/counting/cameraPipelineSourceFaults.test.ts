/**
 * The counting pipeline fed by a real live source over loopback HTTP: a camera that switches
 * resolution mid-stream, and one whose host name does not resolve for a while. Frames come from
 * our own synthetic reading room (invented data), JPEG-encoded in memory by sharp; the store is real.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import type { ServerResponse } from 'node:http';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';
import type { CameraConfig } from '../../src/config/loadConfig.ts';
import { createCameraPipeline } from '../../src/counting/cameraPipeline.ts';
import type { GreyFrame } from '../../src/domain/frame.ts';
import type { CameraHandlers } from '../../src/frames/live/cameraSource.ts';
import { mjpegStream } from '../../src/frames/live/mjpegStream.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { openStore, type Store } from '../../src/store/index.ts';
import { QualityFlag } from '../../src/store/samples.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import type { Subspace } from '../../src/vision/subspace.ts';
import { encodeGrey } from '../frames/fixtures.ts';
import { startDnsServer, startServer, waitFor, type TestDnsServer, type TestServer } from '../frames/live/liveFixtures.ts';

const size = { width: 160, height: 120 };
const scene = createScene('reading-room', size);
const large = createScene('reading-room', { width: 320, height: 240 });
let model: Subspace;
beforeAll(() => {
  model = fitSubspace(Array.from({ length: 100 }, (_, i) => scene.emptyFrameAt(i * 30).data), size);
});

const cleanup: (() => void | Promise<void>)[] = [];
afterEach(async () => {
  for (const step of cleanup.splice(0).reverse()) await step();
});

function tempStore(): Store {
  const dir = mkdtempSync(join(tmpdir(), 'residuum-pipeline-faults-'));
  const store = openStore(join(dir, 'r.db'), { timeZone: 'UTC' });
  cleanup.push(() => rmSync(dir, { recursive: true, force: true }), () => store.close());
  return store;
}

function cameraConfig(url: string): CameraConfig {
  return {
    id: 'cam',
    name: 'Camera',
    source: { kind: 'mjpeg', id: 'cam', size, url },
    learnSeconds: 2,
    sampleSeconds: 0.2,
    smoothing: { window: 3, method: 'median' },
    threshold: 3,
    zones: scene.zones,
  };
}

function jpegOf(frame: GreyFrame): Promise<Buffer> {
  return encodeGrey(Buffer.from(frame.data), frame.width, frame.height, 'jpeg', { quality: 95 });
}

/** Writes one part of a multipart/x-mixed-replace stream (common practice of MJPEG cameras). */
function sendPart(response: ServerResponse, jpeg: Buffer): void {
  response.write(`--frame\r\nContent-Type: image/jpeg\r\nContent-Length: ${jpeg.length}\r\n\r\n`);
  response.write(jpeg);
  response.write('\r\n');
}

/** A loopback MJPEG camera sending `jpegs` in a loop, one every 30 ms. */
async function mjpegCamera(jpegs: Buffer[]): Promise<TestServer> {
  const server = await startServer((_request, response) => {
    response.writeHead(200, { 'content-type': 'multipart/x-mixed-replace; boundary=frame' });
    let k = 0;
    const timer = setInterval(() => sendPart(response, jpegs[k++ % jpegs.length]), 30);
    response.on('close', () => clearInterval(timer));
  });
  cleanup.push(() => server.close());
  return server;
}

describe('camera pipeline with a live source', () => {
  it('raises view-changed once when the camera switches to 320×240 from 160×120, marks that interval, and keeps counting', async () => {
    const store = tempStore();
    // People walk through the reading room; from the 40th frame on the camera sends the same scene at 320×240.
    const first = await Promise.all(Array.from({ length: 40 }, (_, i) => jpegOf(scene.frameAt(600 + i).frame)));
    const then = await Promise.all(Array.from({ length: 40 }, (_, i) => jpegOf(large.frameAt(640 + i).frame)));
    let sent = 0;
    const server = await startServer((_request, response) => {
      response.writeHead(200, { 'content-type': 'multipart/x-mixed-replace; boundary=frame' });
      const timer = setInterval(() => sendPart(response, sent < 40 ? first[sent++] : then[sent++ % 40]), 30);
      response.on('close', () => clearInterval(timer));
    });
    cleanup.push(() => server.close());
    const url = `${server.url}/video.mjpg`;
    const camera = cameraConfig(url);
    store.upsertCamera({ id: camera.id, name: camera.name });
    for (const zone of camera.zones) store.upsertZone(camera.id, zone);
    const logs: string[] = [];
    const pipeline = createCameraPipeline({ camera, store, model, log: (line) => logs.push(line) });
    let counted = 0;
    pipeline.on('counted', () => counted++);
    let samplesAtChange: number | undefined;
    let countedAtChange = 0;
    const handlers: CameraHandlers = {
      ...pipeline.handlers,
      status(state, detail) {
        if (detail.previousSourceSize !== undefined) {
          samplesAtChange = store.listSamples({ camera: 'cam', zone: 'entrance' }).length;
          countedAtChange = counted;
        }
        pipeline.handlers.status(state, detail);
      },
    };
    const source = mjpegStream(url, { id: 'cam', size });
    cleanup.push(() => source.stop());
    source.start(handlers);
    await waitFor(() => samplesAtChange !== undefined && store.listSamples({ camera: 'cam', zone: 'entrance' }).length >= samplesAtChange + 4, 'samples after the change', 20_000);
    const live = pipeline.live();
    await source.stop();
    pipeline.stop();

    const events = store.listEvents({ camera: 'cam' });
    const changes = events.filter((e) => e.type === 'view-changed');
    expect(changes).toHaveLength(1);
    expect(changes[0].detail).toEqual({ reason: 'source size changed', from: { width: 160, height: 120 }, to: { width: 320, height: 240 } });
    expect(logs).toContain('camera cam: view changed (source size changed: 160×120 → 320×240; counts marked unreliable)');
    // Frames were counted before and after the change.
    expect(countedAtChange).toBeGreaterThan(0);
    expect(counted).toBeGreaterThan(countedAtChange + 10);
    expect(live.state).toBe('online');
    for (const zone of camera.zones) {
      const flags = store.listSamples({ camera: 'cam', zone: zone.id }).map((s) => s.quality & QualityFlag.viewChanged);
      // The interval in progress at the change is marked, the ones before and after are not
      // (the 320×240 frames, resized, still fit the empty-scene model: no noise-scale change).
      expect(flags.slice(0, samplesAtChange)).toEqual(flags.slice(0, samplesAtChange).map(() => 0));
      expect(flags[samplesAtChange!]).toBe(QualityFlag.viewChanged);
      expect(flags.slice(samplesAtChange! + 1).every((f) => f === 0)).toBe(true);
      expect(flags.length).toBeGreaterThanOrEqual(samplesAtChange! + 4);
    }
  });

  it('marks the camera offline while its host name does not resolve, and counts again once it does', async () => {
    const store = tempStore();
    const server = await mjpegCamera(await Promise.all(Array.from({ length: 20 }, (_, i) => jpegOf(scene.frameAt(700 + i).frame))));
    // RFC 6761 §6.2: .test names are for testing; the loopback DNS server knows this one from its fourth query on.
    const dns: TestDnsServer = await startDnsServer((_name, index) => (index < 3 ? undefined : '127.0.0.1'));
    cleanup.push(() => dns.close());
    const url = `http://camera.test:${new URL(server.url).port}/video.mjpg`;
    const camera = cameraConfig(url);
    store.upsertCamera({ id: camera.id, name: camera.name });
    for (const zone of camera.zones) store.upsertZone(camera.id, zone);
    const pipeline = createCameraPipeline({ camera, store, model });
    const states: string[] = [];
    const reasons = new Set<string>();
    pipeline.on('live', (live) => {
      if (states.at(-1) !== live.state) states.push(live.state);
      if (live.reason !== undefined) reasons.add(live.reason);
    });
    const source = mjpegStream(url, { id: 'cam', size, backoff: { initialMs: 50, maxMs: 200 }, lookup: dns.lookup });
    cleanup.push(() => source.stop());
    let lastConnecting = 0;
    source.start({
      ...pipeline.handlers,
      status(state, detail) {
        if (state === 'connecting') lastConnecting = detail.at;
        pipeline.handlers.status(state, detail);
      },
    });
    await waitFor(() => store.listSamples({ camera: 'cam', zone: 'entrance' }).length >= 3, 'samples once the name resolves', 20_000);
    await source.stop();
    pipeline.stop();

    expect(states.slice(0, 3)).toEqual(['connecting', 'offline', 'connecting']);
    expect(states).toContain('online');
    expect([...reasons]).toEqual([`${url}: request failed: cannot resolve host camera.test (ENOTFOUND)`]);
    const events = store.listEvents({ camera: 'cam' });
    // One outage: one offline event (not one per retry), one online event when it ends.
    expect(events.map((e) => e.type)).toEqual(['offline', 'online']);
    expect(events[0].detail).toEqual({ reason: `${url}: request failed: cannot resolve host camera.test (ENOTFOUND)` });
    // No sample covers the time the name did not resolve: the outage is a gap, the first
    // sample starts with a frame of the connection that worked.
    for (const s of store.listSamples({ camera: 'cam', zone: 'entrance' })) expect(s.time - s.intervalMs).toBeGreaterThanOrEqual(lastConnecting);
  });
});
