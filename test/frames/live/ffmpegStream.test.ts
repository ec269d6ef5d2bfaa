import { writeFile } from 'node:fs/promises';
import type { ServerResponse } from 'node:http';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ffmpegInputKind, ffmpegStream } from '../../../src/frames/live/ffmpegStream.ts';
import { FFMPEG_NOT_FOUND } from '../../../src/frames/readVideo.ts';
import { assertAspect } from '../../../src/frames/workingSize.ts';
import { childProcesses, encodeGrey, greyPixels, makeTempDir, removeTempDir, runFfmpeg } from '../fixtures.ts';
import { activeHandles, expectReleased, record, startServer, stripedJpeg, waitFor } from './liveFixtures.ts';

// Synthetic clip: 5 frames of 64×48 at 25 fps; frame k is flat at level 10 + 50k, except its top
// 8 rows at 128 (so that rows are not mixed up). FFV1 with gray pixels is lossless.
const WIDTH = 64;
const HEIGHT = 48;
const FRAMES = 5;
const level = (k: number, y: number): number => (y < 8 ? 128 : 10 + 50 * k);
const FAST = { backoff: { initialMs: 50, maxMs: 200 } };

/** Which clip frame a delivered frame is (by the level of its lower part), checking every pixel; -1 if none matches exactly. */
function clipIndex(data: Float32Array): number {
  const k = (data[40 * WIDTH] - 10) / 50;
  if (!(Number.isInteger(k) && k >= 0 && k < FRAMES)) return -1;
  for (let y = 0; y < HEIGHT; y++) for (let x = 0; x < WIDTH; x++) if (data[y * WIDTH + x] !== level(k, y)) return -1;
  return k;
}

describe('ffmpegStream', () => {
  let dir: string;
  let clip: string;

  beforeAll(async () => {
    dir = await makeTempDir();
    for (let k = 0; k < FRAMES; k++) {
      const pixels = greyPixels(WIDTH, HEIGHT, (_x, y) => level(k, y));
      await writeFile(join(dir, `f${k}.png`), await encodeGrey(pixels, WIDTH, HEIGHT, 'png'));
    }
    clip = join(dir, 'clip.mkv');
    await runFfmpeg(['-framerate', '25', '-i', join(dir, 'f%d.png'), '-c:v', 'ffv1', '-pix_fmt', 'gray', clip]);
  });

  afterAll(async () => {
    await removeTempDir(dir);
  });

  it('tells inputs apart', () => {
    expect(ffmpegInputKind('rtsp://10.0.0.7:554/stream1')).toBe('rtsp');
    expect(ffmpegInputKind('RTSPS://cam/x')).toBe('rtsp');
    expect(ffmpegInputKind('/dev/video0')).toBe('device');
    expect(ffmpegInputKind('http://cam/video.mjpg')).toBe('url');
    expect(ffmpegInputKind('videos/shop.mp4')).toBe('file');
  });

  it('plays a file in a loop at its frame rate, with the exact levels, and leaves no process after stop', async () => {
    const before = activeHandles();
    const source = ffmpegStream(clip, { id: 'file', size: { width: WIDTH, height: HEIGHT }, realtime: true, loop: true, ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.frames.length >= 12, '12 frames', 20_000);
    expect((await childProcesses('ffmpeg')).length).toBe(1);
    await source.stop();
    expect(await childProcesses('ffmpeg')).toEqual([]); // killed and reaped: no zombie either
    await expectReleased(before);

    expect(seen.log.slice(0, 3)).toEqual(['connecting', 'online', 'frame']);
    expect(seen.bad).toEqual([]);
    // check: the pixel values written into the lossless clip, in order, wrapping around.
    const indices = seen.frames.slice(0, 12).map((f) => clipIndex(f.frame.data));
    expect(indices).toEqual([0, 1, 2, 3, 4, 0, 1, 2, 3, 4, 0, 1]);
    for (const { frame } of seen.frames) expect([frame.width, frame.height]).toEqual([WIDTH, HEIGHT]);
    const times = seen.frames.map((f) => f.capturedAt);
    expect(times.every((t, i) => i === 0 || t >= times[i - 1])).toBe(true);
  });

  it('goes offline when the file ends and plays it again after the backoff delay', async () => {
    const source = ffmpegStream(clip, { id: 'once', size: { width: 32, height: 24 }, ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.statuses.filter((s) => s.state === 'online').length >= 2, 'a second run', 20_000);
    await source.stop();
    expect(await childProcesses('ffmpeg')).toEqual([]);
    const offline = seen.statuses.find((s) => s.state === 'offline')!;
    expect(offline.detail.reason).toBe(`${clip}: the input ended`);
    expect(offline.detail.attempt).toBe(1);
    const firstOffline = seen.log.indexOf('offline');
    expect(seen.log.slice(firstOffline, firstOffline + 3)).toEqual(['offline', 'connecting', 'online']);
    expect(seen.log.slice(0, firstOffline).filter((e) => e === 'frame')).toHaveLength(FRAMES);
    // Scaled by ffmpeg to 32×24: flat areas stay flat.
    expect(seen.frames[1].frame.data[20 * 32 + 5]).toBe(60);
  });

  it('refuses a source of the wrong aspect ratio with the assertAspect message', async () => {
    const source = ffmpegStream(clip, { id: 'sq', size: { width: 48, height: 48 }, ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.state() === 'offline', 'offline', 20_000);
    await source.stop();
    let expected = '';
    try {
      assertAspect({ width: 48, height: 48 }, { width: WIDTH, height: HEIGHT });
    } catch (error) {
      expected = (error as Error).message;
    }
    expect(seen.bad[0].message).toBe(`${clip}: ${expected}`);
    expect(seen.statuses[1].detail.reason).toBe(`wrong aspect ratio: ${expected}`);
    expect(seen.frames).toEqual([]);
    expect(await childProcesses('ffmpeg')).toEqual([]);
  });

  it('says so when ffmpeg is missing, and keeps retrying', async () => {
    const source = ffmpegStream(clip, { id: 'x', size: { width: WIDTH, height: HEIGHT }, ffmpegPath: '/nonexistent/ffmpeg', ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.statuses.filter((s) => s.state === 'offline').length >= 2, 'two attempts');
    await source.stop();
    expect(seen.statuses[1].detail.reason).toBe(`${FFMPEG_NOT_FOUND} (tried '/nonexistent/ffmpeg')`);
  });

  it('restarts ffmpeg when its input stalls', async () => {
    const jpeg = await stripedJpeg(WIDTH, HEIGHT, 200);
    // An MJPEG server (common practice: multipart/x-mixed-replace) read by ffmpeg's mpjpeg demuxer:
    // the first connection sends a few frames and then nothing; later ones send frames every 40 ms.
    const send = (response: ServerResponse): void => {
      response.write(`--frame\r\nContent-Type: image/jpeg\r\nContent-Length: ${jpeg.length}\r\n\r\n`);
      response.write(jpeg);
      response.write('\r\n');
    };
    const server = await startServer((_request, response, index) => {
      response.writeHead(200, { 'content-type': 'multipart/x-mixed-replace; boundary=frame' });
      if (index === 0) {
        for (let k = 0; k < 3; k++) send(response);
        return;
      }
      const timer = setInterval(() => send(response), 40);
      response.on('close', () => clearInterval(timer));
    });
    const source = ffmpegStream(`${server.url}/video`, {
      id: 'mjpeg-via-ffmpeg',
      size: { width: WIDTH, height: HEIGHT },
      inputOptions: ['-f', 'mpjpeg'],
      stallMs: 1500,
      ...FAST,
    });
    const seen = record();
    source.start(seen.handlers);
    try {
      await waitFor(() => seen.statuses.some((s, i) => s.state === 'online' && seen.statuses.slice(0, i).some((p) => p.state === 'offline')), 'online after a stall', 30_000);
    } finally {
      await source.stop();
      await server.close();
    }
    expect(await childProcesses('ffmpeg')).toEqual([]);
    const offline = seen.statuses.find((s) => s.state === 'offline')!;
    expect(offline.detail.reason).toBe(`${server.url}/video: stalled: no frame data for stallMs (1500 ms)`);
    expect(seen.frames.length).toBeGreaterThan(0);
  });

  it('validates its options naming the field', () => {
    const size = { width: WIDTH, height: HEIGHT };
    expect(() => ffmpegStream('rtsp://cam/x', { id: 'a', size, loop: true })).toThrow(/loop applies to a video file only/);
    expect(() => ffmpegStream(clip, { id: 'a', size, stallMs: 0 })).toThrow(/stallMs/);
    expect(() => ffmpegStream(clip, { id: 'a', size, inputOptions: [1 as never] })).toThrow(/inputOptions/);
  });
});
