import { createServer, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { probeSource, SourceProbeError } from '../../../src/frames/live/probeSource.ts';

// A local HTTP server plays the camera: an MJPEG stream of flat grey 640×480 JPEGs (our own), a
// stream that sends headers and then nothing, and a snapshot of another shape.

let server: Server;
let base: string;
const open = new Set<ServerResponse>();
const size = { width: 320, height: 240 };

beforeAll(async () => {
  const jpeg = await sharp({ create: { width: 640, height: 480, channels: 3, background: { r: 90, g: 90, b: 90 } } }).jpeg().toBuffer();
  const wide = await sharp({ create: { width: 1280, height: 720, channels: 3, background: { r: 90, g: 90, b: 90 } } }).jpeg().toBuffer();
  server = createServer((req, res) => {
    open.add(res);
    res.on('close', () => open.delete(res));
    if (req.url === '/wide.jpg') return void res.writeHead(200, { 'content-type': 'image/jpeg' }).end(wide);
    // check: multipart/x-mixed-replace as cameras send it (RFC 2046 §5.1.1 boundaries), common practice for MJPEG over HTTP.
    res.writeHead(200, { 'content-type': 'multipart/x-mixed-replace; boundary=frame' });
    if (req.url === '/silent.mjpg') return;
    const part = Buffer.concat([Buffer.from('--frame\r\nContent-Type: image/jpeg\r\n\r\n'), jpeg, Buffer.from('\r\n')]);
    const timer = setInterval(() => res.write(part), 50);
    res.on('close', () => clearInterval(timer));
  });
  await new Promise<void>((done) => server.listen(0, '127.0.0.1', done));
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});

afterAll(async () => {
  for (const res of open) res.destroy();
  await new Promise<void>((done) => server.close(() => done()));
});

describe('probeSource', () => {
  it('resolves at the first frame of an MJPEG stream with the camera size, and closes the stream', async () => {
    const result = await probeSource({ kind: 'mjpeg', id: 'probe', size, url: `${base}/stream.mjpg` });
    expect(result).toEqual({ sourceSize: { width: 640, height: 480 } });
    // The probe stopped the source: the server sees its connection closed.
    await new Promise((done) => setTimeout(done, 100));
    expect(open.size).toBe(0);
  });

  it('fails with the camera size when the picture has another aspect ratio', async () => {
    const error = await probeSource({ kind: 'snapshot', id: 'probe', size, url: `${base}/wide.jpg` }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(SourceProbeError);
    expect((error as SourceProbeError).sourceSize).toEqual({ width: 1280, height: 720 });
    expect((error as SourceProbeError).reason).toMatch(/source is 1280×720/);
  });

  it('gives up after the time limit when nothing comes', async () => {
    const error = await probeSource({ kind: 'mjpeg', id: 'probe', size, url: `${base}/silent.mjpg` }, { timeoutMs: 300 }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(SourceProbeError);
    expect((error as Error).message).toBe('no picture within 300 ms');
  });
});
