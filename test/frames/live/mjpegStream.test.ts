import type { ServerResponse } from 'node:http';
import { afterEach, describe, expect, it } from 'vitest';
import { mjpegStream } from '../../../src/frames/live/mjpegStream.ts';
import { assertAspect } from '../../../src/frames/workingSize.ts';
import { encodeGrey, greyPixels } from '../fixtures.ts';
import { activeHandles, expectReleased, meanLevel, record, startDnsServer, startServer, stripedJpeg, waitFor, type TestDnsServer, type TestServer } from './liveFixtures.ts';

const SIZE = { width: 64, height: 48 };
const FAST = { stallMs: 300, backoff: { initialMs: 50, maxMs: 200 } };

let server: TestServer | undefined;
let dns: TestDnsServer | undefined;
afterEach(async () => {
  await server?.close();
  server = undefined;
  await dns?.close();
  dns = undefined;
});

/** Starts a multipart/x-mixed-replace response (common practice of MJPEG cameras); returns a part writer. */
function mjpeg(response: ServerResponse, boundary = 'myboundary'): (jpeg: Buffer, withLength?: boolean) => void {
  response.writeHead(200, { 'content-type': `multipart/x-mixed-replace; boundary=${boundary}`, 'cache-control': 'no-cache' });
  return (jpeg, withLength = true) => {
    response.write(`--${boundary.replace(/^--/, '')}\r\nContent-Type: image/jpeg\r\n${withLength ? `Content-Length: ${jpeg.length}\r\n` : ''}\r\n`);
    response.write(jpeg);
    response.write('\r\n');
  };
}

describe('mjpegStream', () => {
  it('delivers the frames of a stream, reconnects when it stalls, and frames resume', async () => {
    const first = await stripedJpeg(128, 96, 200);
    const second = await stripedJpeg(128, 96, 60);
    server = await startServer((_request, response, index) => {
      const send = mjpeg(response);
      // Connection 1: three frames, then silence (the socket stays open). Later ones: frames every 50 ms.
      if (index === 0) {
        for (let k = 0; k < 3; k++) send(first, k !== 1);
        return;
      }
      const timer = setInterval(() => send(second), 50);
      response.on('close', () => clearInterval(timer));
    });
    const before = activeHandles();
    const source = mjpegStream(`${server.url}/video.mjpg`, { id: 'hall', size: SIZE, ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.frames.some((f) => meanLevel(f.frame) < 100) && seen.frames.length >= 5, 'frames after reconnecting');
    await source.stop();
    await expectReleased(before); // before the server closes its side

    expect(seen.bad).toEqual([]);
    expect(seen.log.slice(0, 2)).toEqual(['connecting', 'online']);
    const offlineAt = seen.log.indexOf('offline');
    expect(seen.log.slice(offlineAt, offlineAt + 3)).toEqual(['offline', 'connecting', 'online']);
    const offline = seen.statuses.find((s) => s.state === 'offline')!.detail;
    expect(offline.reason).toMatch(/video\.mjpg: stalled: no data for stallMs \(300 ms\)$/);
    expect(offline.attempt).toBe(1);
    // Frames of the first connection (level ≈ 175) came before those of the second (≈ 52).
    const levels = seen.frames.map((f) => meanLevel(f.frame));
    const switchAt = levels.findIndex((level) => level < 100);
    expect(switchAt).toBeGreaterThanOrEqual(1);
    expect(levels.slice(0, switchAt).every((level) => Math.abs(level - 175) < 3)).toBe(true);
    expect(levels.slice(switchAt).every((level) => Math.abs(level - 52.5) < 3)).toBe(true);
    for (const { frame } of seen.frames) expect([frame.width, frame.height]).toEqual([SIZE.width, SIZE.height]);
  });

  it('reports bad parts and keeps going; drops a part over maxPartBytes', async () => {
    const good = await stripedJpeg(64, 48, 120);
    // Noise compresses badly: a JPEG of well over 20 kB.
    const big = await encodeGrey(greyPixels(256, 192, (x, y) => ((x * 73856093) ^ (y * 19349663)) >>> 24), 256, 192, 'jpeg', { quality: 95 });
    expect(big.length).toBeGreaterThan(20_000);
    let stream: ServerResponse | undefined;
    server = await startServer((_request, response, index) => {
      if (index > 0) return void response.writeHead(503).end();
      stream = response;
    });
    const source = mjpegStream(`${server.url}/`, { id: 'c', size: SIZE, ...FAST, stallMs: 30_000, maxPartBytes: 20_000 });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => stream !== undefined, 'the request');
    const send = mjpeg(stream!, '--frame');
    // One part at a time, each once the previous one has been dealt with (decoding keeps only the newest waiting part).
    const parts: [Buffer, boolean][] = [
      [good, true],
      [Buffer.from([0xff, 0xd8, 0xff, 0xe0, 0x00, 0x10, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14]), true], // cut short
      [big, true],
      [big, false],
      [good, false],
    ];
    for (const [jpeg, withLength] of parts) {
      const before = seen.frames.length + seen.bad.length;
      send(jpeg, withLength);
      await waitFor(() => seen.frames.length + seen.bad.length > before, 'the part to be dealt with');
    }
    stream!.end('--frame--\r\n');
    await waitFor(() => seen.state() === 'offline', 'the end of the stream');
    await source.stop();
    expect(seen.frames).toHaveLength(2);
    expect(seen.bad.map((e) => e.message)).toEqual([
      expect.stringMatching(/truncated or corrupt image/),
      expect.stringMatching(/: part dropped: part declares \d+ bytes \(Content-Length\), more than maxPartBytes \(20000\)$/),
      expect.stringMatching(/: part dropped: part longer than maxPartBytes \(20000\)$/),
    ]);
    expect(seen.log.slice(0, 8)).toEqual(['connecting', 'online', 'frame', 'bad', 'bad', 'bad', 'frame', 'offline']);
    expect(seen.statuses[2].detail.reason).toMatch(/the stream ended$/);
  });

  it('delivers the frames that arrived before the stream ended, then reports offline', async () => {
    const good = await stripedJpeg(64, 48, 120);
    server = await startServer((_request, response, index) => {
      if (index > 0) return void response.writeHead(503).end();
      mjpeg(response)(good);
      response.end('--myboundary--\r\n');
    });
    const source = mjpegStream(`${server.url}/`, { id: 'c', size: SIZE, ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.state() === 'offline', 'offline');
    await source.stop();
    expect(seen.log.slice(0, 4)).toEqual(['connecting', 'online', 'frame', 'offline']);
  });

  it('goes offline after too many wrong-aspect frames, with the assertAspect message', async () => {
    const square = await stripedJpeg(64, 64, 90);
    server = await startServer((_request, response) => {
      const send = mjpeg(response);
      const timer = setInterval(() => send(square), 20);
      response.on('close', () => clearInterval(timer));
    });
    const source = mjpegStream(`${server.url}/s`, { id: 'c', size: SIZE, ...FAST, badFramesBeforeOffline: 3 });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.state() === 'offline', 'offline');
    await source.stop();
    let expected = '';
    try {
      assertAspect(SIZE, { width: 64, height: 64 });
    } catch (error) {
      expected = (error as Error).message;
    }
    expect(seen.bad.length).toBeGreaterThanOrEqual(3);
    expect(seen.bad[0].message).toBe(`${server.url}/s: ${expected}`);
    expect(seen.statuses.find((s) => s.state === 'offline')!.detail.reason).toBe(`wrong aspect ratio: ${expected}`);
    expect(seen.frames).toEqual([]);
  });

  it('is offline for an error status or a response that is not multipart, sending Basic auth', async () => {
    const jpeg = await stripedJpeg(64, 48, 100);
    const authorizations: (string | undefined)[] = [];
    server = await startServer((request, response, index) => {
      authorizations.push(request.headers.authorization);
      if (index === 0) response.writeHead(401, { 'www-authenticate': 'Basic realm="cam"' }).end();
      else response.writeHead(200, { 'content-type': 'image/jpeg' }).end(jpeg);
    });
    const source = mjpegStream(`${server.url}/video`, { id: 'c', size: SIZE, ...FAST, username: 'Aladdin', password: 'open sesame' });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.statuses.filter((s) => s.state === 'offline').length >= 2, 'two failed connections');
    await source.stop();
    const reasons = seen.statuses.filter((s) => s.state === 'offline').map((s) => s.detail.reason);
    expect(reasons[0]).toMatch(/video: HTTP 401 Unauthorized$/);
    expect(reasons[1]).toMatch(/not an MJPEG stream: Content-Type image\/jpeg$/);
    // check: RFC 7617 §2 example credentials (recalled from memory).
    expect(authorizations[0]).toBe('Basic QWxhZGRpbjpvcGVuIHNlc2FtZQ==');
    expect(seen.frames).toEqual([]);
  });

  it('reconnects when the server hangs up before answering', async () => {
    const jpeg = await stripedJpeg(64, 48, 100);
    server = await startServer((request, response, index) => {
      if (index === 0) return void request.socket.destroy();
      mjpeg(response)(jpeg);
    });
    const source = mjpegStream(`${server.url}/`, { id: 'c', size: SIZE, ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.frames.length >= 1, 'a frame');
    await source.stop();
    expect(seen.log.slice(0, 4)).toEqual(['connecting', 'offline', 'connecting', 'online']);
    expect(seen.statuses[1].detail.reason).toMatch(/request failed: socket hang up/);
  });

  it('reports a host name that does not resolve, retries with backoff, and recovers once it resolves', async () => {
    const jpeg = await stripedJpeg(64, 48, 100);
    server = await startServer((_request, response) => {
      const send = mjpeg(response);
      const timer = setInterval(() => send(jpeg), 20);
      response.on('close', () => clearInterval(timer));
    });
    // The camera's name (RFC 6761 §6.2 reserves .test for testing) is unknown to the (loopback) DNS
    // server for its first three queries, then points to the loopback HTTP server.
    dns = await startDnsServer((_name, index) => (index < 3 ? undefined : '127.0.0.1'));
    const port = new URL(server.url).port;
    const before = activeHandles();
    const source = mjpegStream(`http://camera.test:${port}/video.mjpg`, { id: 'c', size: SIZE, ...FAST, lookup: dns.lookup });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.frames.length >= 2, 'frames once the name resolves');
    await source.stop();
    await expectReleased(before);

    expect(seen.log.slice(0, 8)).toEqual(['connecting', 'offline', 'connecting', 'offline', 'connecting', 'offline', 'connecting', 'online']);
    const offline = seen.statuses.filter((s) => s.state === 'offline').map((s) => s.detail);
    // check: the resolver's own answer to NXDOMAIN (Node's dns.Resolver: code ENOTFOUND).
    for (const detail of offline) expect(detail.reason).toBe(`http://camera.test:${port}/video.mjpg: request failed: cannot resolve host camera.test (ENOTFOUND)`);
    expect(offline.map((d) => d.attempt)).toEqual([1, 2, 3]);
    // Full-jitter windows of 50, 100, 200 ms (initialMs 50, doubling, maxMs 200).
    offline.forEach((d, k) => expect(d.retryInMs).toBeLessThan([50, 100, 200][k]));
    expect(seen.statuses.filter((s) => s.state === 'connecting').map((s) => s.detail.attempt).slice(0, 4)).toEqual([1, 2, 3, 4]);
    // Nothing reached the camera before its name resolved; then it was asked for by name.
    expect(dns.queries.slice(0, 4)).toEqual(['camera.test', 'camera.test', 'camera.test', 'camera.test']);
    expect(server.requests.length).toBeGreaterThanOrEqual(1);
    expect(server.requests[0].headers.host).toBe(`camera.test:${port}`);
  });

  it('reports a change of the JPEG size with the same aspect ratio once, before its first frame, and keeps delivering', async () => {
    // 64×48 → 128×96 → 64×48 in one stream, then (second connection) 128×96 again.
    const small = await stripedJpeg(64, 48, 200);
    const large = await stripedJpeg(128, 96, 60);
    let stream: ServerResponse | undefined;
    server = await startServer((_request, response, index) => {
      if (index === 0) return void (stream = response);
      const send = mjpeg(response);
      const timer = setInterval(() => send(large), 20);
      response.on('close', () => clearInterval(timer));
    });
    const source = mjpegStream(`${server.url}/video.mjpg`, { id: 'c', size: SIZE, ...FAST, stallMs: 30_000 });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => stream !== undefined, 'the request');
    const send = mjpeg(stream!);
    for (const jpeg of [small, small, large, large, large, small, small]) {
      const before = seen.frames.length;
      send(jpeg);
      await waitFor(() => seen.frames.length > before, 'the frame');
    }
    stream!.end('--myboundary--\r\n');
    await waitFor(() => seen.statuses.filter((s) => s.state === 'online').length >= 4 && seen.log.at(-1) === 'frame', 'the second connection');
    await source.stop();

    expect(seen.bad).toEqual([]);
    const firstOffline = seen.log.indexOf('offline');
    expect(seen.log.slice(0, firstOffline)).toEqual([
      'connecting', 'online', 'frame', 'frame', 'online', 'frame', 'frame', 'frame', 'online', 'frame', 'frame',
    ]);
    const online = seen.statuses.filter((s) => s.state === 'online').map((s) => s.detail);
    expect(online[0]).toMatchObject({ sourceSize: { width: 64, height: 48 } });
    expect(online[0].previousSourceSize).toBeUndefined();
    expect(online[1]).toMatchObject({ reason: 'source size changed: 64×48 → 128×96', sourceSize: { width: 128, height: 96 }, previousSourceSize: { width: 64, height: 48 } });
    expect(online[2]).toMatchObject({ reason: 'source size changed: 128×96 → 64×48', sourceSize: { width: 64, height: 48 }, previousSourceSize: { width: 128, height: 96 } });
    // The next connection comes back at another size than the last frame's: told with its `online`.
    expect(online[3]).toMatchObject({ reason: 'source size changed: 64×48 → 128×96', sourceSize: { width: 128, height: 96 }, previousSourceSize: { width: 64, height: 48 } });
    expect(seen.log.slice(seen.log.indexOf('online', firstOffline) + 1).every((e) => e === 'frame')).toBe(true);
    // Every frame resized to the working size; the levels tell which JPEG each came from (3/4 of 200 + 1/4 of 100, or of 60 and 30).
    for (const { frame } of seen.frames) expect([frame.width, frame.height]).toEqual([SIZE.width, SIZE.height]);
    const levels = seen.frames.slice(0, 7).map((f) => Math.round(meanLevel(f.frame) / 10) * 10);
    expect(levels).toEqual([180, 180, 50, 50, 50, 180, 180]);
  });
});
