import { spawn } from 'node:child_process';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createCameraSource, type CameraSourceDescription } from '../../../src/frames/live/createCameraSource.ts';
import { encodeGrey, greyPixels, makeTempDir, removeTempDir, runFfmpeg } from '../fixtures.ts';
import { manualClock, record, startServer, stripedJpeg, waitFor } from './liveFixtures.ts';

describe('createCameraSource', () => {
  let dir: string;
  beforeAll(async () => {
    dir = await makeTempDir();
  });
  afterAll(async () => {
    await removeTempDir(dir);
  });

  it('makes the source of each kind, with its id', async () => {
    const size = { width: 64, height: 48 };
    const descriptions: CameraSourceDescription[] = [
      { kind: 'drop-folder', id: 'a', size, path: dir, afterRead: 'keep' },
      { kind: 'snapshot', id: 'b', size, url: 'http://127.0.0.1:9/snap.jpg', intervalMs: 500, timeoutMs: 100 },
      { kind: 'mjpeg', id: 'c', size, url: 'http://127.0.0.1:9/video', stallMs: 100, backoff: { initialMs: 10 } },
      { kind: 'ffmpeg', id: 'd', size, input: 'rtsp://127.0.0.1:9/x', options: ['-rtsp_flags', 'prefer_tcp'] },
      { kind: 'synthetic', id: 'e', size, scene: 'reading-room', speed: 2, seed: 5 },
    ];
    expect(descriptions.map((d) => createCameraSource(d).id)).toEqual(['a', 'b', 'c', 'd', 'e']);
  });

  it('renders the synthetic scene at exactly the configured size', async () => {
    const clock = manualClock();
    const source = createCameraSource({ kind: 'synthetic', id: 'demo', size: { width: 120, height: 90 }, scene: 'stock-room' }, { clock });
    const seen = record();
    source.start(seen.handlers);
    clock.advance(300);
    await source.stop();
    expect(seen.frames).toHaveLength(4);
    expect(seen.frames.every((f) => f.frame.width === 120 && f.frame.height === 90)).toBe(true);
  });

  it('reconnects an MJPEG stream after 30 s without a byte when the configuration sets no stallMs', async () => {
    // Issue #7: "no bytes for 30 s → reconnect". Time is a manual clock here: the stream is silent
    // after one frame, and the source reacts at the 30 000th millisecond, not before.
    const jpeg = await stripedJpeg(64, 48, 100);
    const server = await startServer((_request, response, index) => {
      response.writeHead(200, { 'content-type': 'multipart/x-mixed-replace; boundary=frame' });
      if (index > 0) return;
      response.write(`--frame\r\nContent-Type: image/jpeg\r\nContent-Length: ${jpeg.length}\r\n\r\n`);
      response.write(jpeg);
      response.write('\r\n');
    });
    const clock = manualClock(1_000_000);
    const source = createCameraSource({ kind: 'mjpeg', id: 'quiet', size: { width: 64, height: 48 }, url: `${server.url}/video` }, { clock });
    const seen = record();
    try {
      source.start(seen.handlers);
      await waitFor(() => seen.frames.length === 1, 'the frame');
      clock.advance(29_999);
      await new Promise((resolve) => setTimeout(resolve, 100)); // let a wrongly early stall show
      expect(seen.log).toEqual(['connecting', 'online', 'frame']);
      clock.advance(1);
      await waitFor(() => seen.state() === 'offline', 'offline');
      expect(seen.statuses.at(-1)!.detail.reason).toBe(`${server.url}/video: stalled: no data for stallMs (30000 ms)`);
    } finally {
      await source.stop();
      await server.close();
    }
  });

  it('rejects unknown kinds and bad common fields naming them', () => {
    const size = { width: 64, height: 48 };
    expect(() => createCameraSource({ kind: 'usb', id: 'x', size } as never)).toThrow(/kind must be one of drop-folder, snapshot, mjpeg, ffmpeg, synthetic, got "usb"/);
    expect(() => createCameraSource({ kind: 'synthetic', id: '', size, scene: 'stock-room' })).toThrow(/id must be a non-empty string/);
    expect(() => createCameraSource({ kind: 'synthetic', id: 'x', size: { width: 64, height: 0 }, scene: 'stock-room' })).toThrow(/size must be/);
    expect(() => createCameraSource({ kind: 'synthetic', id: 'x', size, scene: 'garden' as never })).toThrow(/scene id must be one of/);
    expect(() => createCameraSource({ kind: 'snapshot', id: 'x', size, url: 'http://h/', backoff: { maxMs: 1 } })).toThrow(/backoff.maxMs/);
  });

  it('leaves nothing running after stop: a process running every kind of source exits by itself', async () => {
    const folder = join(dir, 'drop');
    await (await import('node:fs/promises')).mkdir(folder);
    await writeFile(join(dir, 'f0.png'), await encodeGrey(greyPixels(64, 48, (x) => x * 4), 64, 48, 'png'));
    const clip = join(dir, 'clip.mkv');
    await runFfmpeg(['-loop', '1', '-framerate', '25', '-t', '0.4', '-i', join(dir, 'f0.png'), '-c:v', 'ffv1', '-pix_fmt', 'gray', clip]);
    const jpeg = await encodeGrey(greyPixels(64, 48, () => 120), 64, 48, 'jpeg');
    const server = await startServer((request, response) => {
      if (request.url === '/snapshot.jpg') return void response.writeHead(200, { 'content-type': 'image/jpeg' }).end(jpeg);
      response.writeHead(200, { 'content-type': 'multipart/x-mixed-replace; boundary=frame' });
      const part = Buffer.concat([Buffer.from('--frame\r\nContent-Type: image/jpeg\r\n\r\n'), jpeg, Buffer.from('\r\n')]);
      const timer = setInterval(() => response.write(part), 50);
      response.on('close', () => clearInterval(timer));
    });
    const script = fileURLToPath(new URL('./stopAndExit.fixture.ts', import.meta.url));
    const child = spawn(process.execPath, ['--import', 'tsx', script, folder, clip, server.url], { stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
    child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
    // A generous limit: the child needs about a second; if a handle kept it alive it would never exit.
    const code = await new Promise<number | string>((resolve) => {
      const limit = setTimeout(() => {
        child.kill('SIGKILL');
        resolve('still running after 60 s');
      }, 60_000);
      child.on('close', (exitCode) => {
        clearTimeout(limit);
        resolve(exitCode ?? 'killed');
      });
    });
    await server.close();
    expect({ code, stderr }).toEqual({ code: 0, stderr: '' });
    expect(stdout.trim()).toBe('stopped ffmpeg,folder,mjpeg,snapshot,synthetic');
  }, 120_000);
});
