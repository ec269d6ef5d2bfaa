// `npm run faults`: source and storage faults at their real timing, outside `npm test` (about a
// minute). Everything runs on this machine: HTTP and DNS servers on 127.0.0.1, no name is sent to
// a real DNS server. Scenarios, with the sources' default settings:
//   1. an MJPEG camera that goes silent for 35 s (the default stall timeout is 30 s);
//   2. a snapshot camera answering HTTP 500 to everything for 15 s;
//   3. an MJPEG camera whose host name does not resolve for its first 4 lookups;
//   4. (root, where tmpfs can be mounted) a full disk under the database, then space freed;
//      and a data folder that is read-only.
// The network scenarios run side by side (as cameras of one site would). Prints one report
// line per check and exits with 1 if any fails.
import { execFileSync, spawnSync } from 'node:child_process';
import { closeSync, mkdtempSync, openSync, rmSync, writeSync } from 'node:fs';
import type { ServerResponse } from 'node:http';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { CameraConfig } from '../src/config/loadConfig.ts';
import { createCameraPipeline } from '../src/counting/cameraPipeline.ts';
import type { CameraSource } from '../src/frames/live/cameraSource.ts';
import { mjpegStream } from '../src/frames/live/mjpegStream.ts';
import { snapshotPoller } from '../src/frames/live/snapshotPoller.ts';
import { createScene } from '../src/frames/synthetic/index.ts';
import { openStore, type Store } from '../src/store/index.ts';
import { fitSubspace } from '../src/vision/fitSubspace.ts';
import { record, startDnsServer, startServer, stripedJpeg, waitFor, type Recording } from '../test/frames/live/liveFixtures.ts';

interface Check {
  readonly scenario: string;
  readonly ok: boolean;
  readonly text: string;
}
const checks: Check[] = [];
/** Report order: by the first word of the scenario's name. */
const ORDER = ['stall', 'HTTP', 'DNS', 'disk', 'read-only'];
const check = (scenario: string, ok: boolean, text: string): void => {
  checks.push({ scenario, ok, text });
};
const seconds = (ms: number): string => `${(ms / 1000).toFixed(1)} s`;

/** Writes one part of a multipart/x-mixed-replace stream (common practice of MJPEG cameras). */
function sendPart(response: ServerResponse, jpeg: Buffer): void {
  response.write(`--frame\r\nContent-Type: image/jpeg\r\nContent-Length: ${jpeg.length}\r\n\r\n`);
  response.write(jpeg);
  response.write('\r\n');
}

/** Starts `source`, runs `until`, stops it whatever happens. */
async function run(source: CameraSource, seen: Recording, until: () => Promise<void>): Promise<void> {
  source.start(seen.handlers);
  try {
    await until();
  } finally {
    await source.stop();
  }
}

// 1. A stall of 35 s against the default stall timeout.
async function stall(): Promise<void> {
  const name = 'stall (35 s of silence, default stallMs)';
  const jpeg = await stripedJpeg(64, 48, 120);
  let lastByteAt = 0;
  const server = await startServer((_request, response, index) => {
    response.writeHead(200, { 'content-type': 'multipart/x-mixed-replace; boundary=frame' });
    let k = 0;
    const timer = setInterval(() => {
      // Connection 1: 10 frames, then nothing for 35 s (the socket stays open), then frames again.
      if (index === 0 && k >= 10 && Date.now() - lastByteAt < 35_000) return;
      sendPart(response, jpeg);
      if (index === 0) lastByteAt = Date.now();
      k++;
    }, 100);
    response.on('close', () => clearInterval(timer));
  });
  const seen = record();
  const source = mjpegStream(`${server.url}/video.mjpg`, { id: 'stall', size: { width: 64, height: 48 } });
  try {
    await run(source, seen, () => waitFor(() => seen.statuses.filter((s) => s.state === 'online').length >= 2 && seen.log.at(-1) === 'frame', 'frames after the reconnection', 60_000));
  } finally {
    await server.close();
  }
  const offline = seen.statuses.find((s) => s.state === 'offline')!;
  const reconnect = seen.statuses.find((s, i) => s.state === 'connecting' && i > 1)!;
  const online = seen.statuses.filter((s) => s.state === 'online')[1];
  const silent = offline.detail.at - lastByteAt;
  check(name, /stalled: no data for stallMs \(30000 ms\)$/.test(offline.detail.reason ?? ''), `offline after ${seconds(silent)} without a byte: "${offline.detail.reason}"`);
  check(name, silent >= 30_000 && silent < 31_000, `the stall was noticed at 30 s (±1 s), before the camera's 35 s of silence ended`);
  check(name, online !== undefined, `reconnected ${seconds(reconnect.detail.at - offline.detail.at)} later (backoff ${offline.detail.retryInMs} ms, window 1 s), online again, frames resumed`);
}

// 2. A storm of HTTP 500 answers.
async function storm(): Promise<void> {
  const name = 'HTTP 500 storm (15 s, default backoff)';
  const jpeg = await stripedJpeg(64, 48, 120);
  let stormFrom = Infinity;
  let stormTo = Infinity;
  let during = 0;
  const server = await startServer((_request, response) => {
    const now = Date.now();
    if (now >= stormFrom && now < stormTo) {
      during++;
      response.writeHead(500, { 'content-type': 'text/plain' }).end('internal error');
    } else {
      response.writeHead(200, { 'content-type': 'image/jpeg' }).end(jpeg);
    }
  });
  const seen = record();
  const source = snapshotPoller(`${server.url}/snapshot.jpg`, { id: 'storm', size: { width: 64, height: 48 } });
  try {
    await run(source, seen, async () => {
      await waitFor(() => seen.frames.length >= 2, 'frames before the storm');
      stormFrom = Date.now();
      stormTo = stormFrom + 15_000;
      await waitFor(() => seen.frames.length >= 4 && Date.now() > stormTo, 'frames after the storm', 90_000);
    });
  } finally {
    await server.close();
  }
  const offline = seen.statuses.filter((s) => s.state === 'offline').map((s) => s.detail);
  const backAt = seen.statuses.filter((s) => s.state === 'online').at(-1)!.detail.at;
  const windows = offline.map((d) => Math.min(60_000, 1000 * 2 ** ((d.attempt ?? 1) - 1)));
  check(name, offline.length >= 1 && /^3 bad frames in a row, the last: .*HTTP 500 Internal Server Error$/.test(offline[0].reason ?? ''), `offline after 3 failed polls: "${offline[0]?.reason}"`);
  check(
    name,
    offline.every((d, k) => d.attempt === k + 1 && (d.retryInMs ?? -1) >= 0 && (d.retryInMs ?? Infinity) < windows[k]),
    `retries ${offline.map((d) => `#${d.attempt} after ${seconds(d.retryInMs ?? 0)}`).join(', ')} (full-jitter windows ${windows.map((w) => seconds(w)).join(', ')})`,
  );
  check(name, during < 15, `${during} requests reached the server during the 15 s storm (one a second without backoff: 15)`);
  check(name, backAt > stormTo, `online again ${seconds(backAt - stormTo)} after the storm ended, frames resumed`);
}

// 3. A host name that does not resolve, then does.
async function dnsFailure(): Promise<void> {
  const name = 'DNS failure, then recovery (default backoff)';
  const jpeg = await stripedJpeg(64, 48, 120);
  const server = await startServer((_request, response) => {
    response.writeHead(200, { 'content-type': 'multipart/x-mixed-replace; boundary=frame' });
    const timer = setInterval(() => sendPart(response, jpeg), 100);
    response.on('close', () => clearInterval(timer));
  });
  // RFC 6761 §6.2 reserves .test for testing; the loopback DNS server answers NXDOMAIN 4 times.
  const dns = await startDnsServer((_name, index) => (index < 4 ? undefined : '127.0.0.1'));
  const port = new URL(server.url).port;
  const seen = record();
  const source = mjpegStream(`http://camera.test:${port}/video.mjpg`, { id: 'dns', size: { width: 64, height: 48 }, lookup: dns.lookup });
  try {
    await run(source, seen, () => waitFor(() => seen.frames.length >= 3, 'frames once the name resolves', 60_000));
  } finally {
    await server.close();
    await dns.close();
  }
  const offline = seen.statuses.filter((s) => s.state === 'offline').map((s) => s.detail);
  const start = seen.statuses[0].detail.at;
  const online = seen.statuses.find((s) => s.state === 'online')!.detail.at;
  check(name, offline.length === 4 && offline.every((d) => / request failed: cannot resolve host camera\.test \(ENOTFOUND\)$/.test(d.reason ?? '')), `${offline.length} times offline: "${offline[0]?.reason}"`);
  check(name, offline.every((d, k) => d.attempt === k + 1), `retries ${offline.map((d) => `#${d.attempt} after ${seconds(d.retryInMs ?? 0)}`).join(', ')}`);
  check(name, server.requests.length >= 1 && server.requests[0].headers.host === `camera.test:${port}`, `online ${seconds(online - start)} after the start; the camera was first asked once its name resolved (${dns.queries.length} lookups)`);
}

// 4. A full disk and a read-only data folder, on a tmpfs of its own.
async function disk(): Promise<void> {
  const name = 'disk full (tmpfs of 2 MiB)';
  if (process.getuid?.() !== 0) return void check(name, true, 'skipped: needs root to mount a tmpfs');
  const mountPoint = mkdtempSync(join(tmpdir(), 'residuum-faults-disk-'));
  const mounted = spawnSync('mount', ['-t', 'tmpfs', '-o', 'size=2m,mode=0755', 'tmpfs', mountPoint], { encoding: 'utf8' });
  if (mounted.status !== 0) {
    rmSync(mountPoint, { recursive: true, force: true });
    return void check(name, true, `skipped: cannot mount a tmpfs here (${mounted.stderr.trim()})`);
  }
  try {
    // Our own synthetic reading room (invented data); frames fed with their scene time, not waited for.
    const size = { width: 160, height: 120 };
    const scene = createScene('reading-room', size);
    const model = fitSubspace(Array.from({ length: 60 }, (_, i) => scene.emptyFrameAt(i * 50).data), size);
    const store = openStore(join(mountPoint, 'data', 'residuum.db'), { timeZone: 'UTC' });
    const camera: CameraConfig = {
      id: 'cam',
      name: 'Camera',
      source: { kind: 'synthetic', scene: 'reading-room', id: 'cam', size },
      learnSeconds: 2,
      sampleSeconds: 1,
      smoothing: { window: 3, method: 'median' },
      threshold: 3,
      zones: scene.zones,
    };
    store.upsertCamera({ id: camera.id, name: camera.name });
    for (const zone of camera.zones) store.upsertZone(camera.id, zone);
    const logs: string[] = [];
    const pipeline = createCameraPipeline({ camera, store, model, log: (line) => logs.push(line) });
    let counted = 0;
    pipeline.on('counted', () => counted++);
    const t0 = Date.UTC(2026, 10, 2, 9, 0, 0);
    let frame = 0;
    const feed = (n: number): void => {
      for (let i = 0; i < n; i++, frame++) pipeline.handlers.frame(scene.frameAt(600 + (frame % 2000)).frame, t0 + frame * 100);
    };
    const stored = (): number => store.listSamples({ camera: 'cam', zone: 'entrance' }).length;
    feed(31); // 3 s: 3 samples per zone
    const before = stored();

    // Fill the disk.
    const filler = join(mountPoint, 'filler');
    const fd = openSync(filler, 'w');
    const chunk = Buffer.alloc(16 * 1024, 0);
    let filled = 0;
    try {
      for (;;) filled += writeSync(fd, chunk);
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code !== 'ENOSPC') throw error;
    } finally {
      closeSync(fd);
    }
    const df = execFileSync('df', ['-k', mountPoint], { encoding: 'utf8' }).trim().split('\n').at(-1)!.split(/\s+/);
    // Count on until SQLite finds no room (its WAL file may still have some), then a minute more.
    let extra = 0;
    while (!logs.some((l) => /cannot write the database/.test(l)) && extra < 600) {
      feed(10);
      extra++;
    }
    const afterFill = stored() - before;
    const whileFullFrom = counted;
    feed(600);
    const fullLog = logs.find((l) => /cannot write the database/.test(l));
    const storedWhileFull = stored();
    check(
      name,
      fullLog !== undefined && /database or disk is full/.test(fullLog),
      `disk filled (${filled} bytes written until ENOSPC, ${df[3]} KiB left); ${afterFill === 0 ? 'the next write failed' : `${afterFill} more samples per zone were written (room left in SQLite's files), then a write failed`}; log: "${fullLog}"`,
    );
    check(name, counted === whileFullFrom + 600 && pipeline.live().state === 'online', `counting went on: ${counted - whileFullFrom} frames counted while the database could not be written`);

    // Free the space.
    rmSync(filler);
    feed(11);
    const back = logs.find((l) => /writable again/.test(l));
    const samples = store.listSamples({ camera: 'cam', zone: 'entrance' });
    const contiguous = samples.every((s, i) => i === 0 || s.time - s.intervalMs === samples[i - 1].time);
    const integrity = store.db.pragma('integrity_check', { simple: true });
    check(name, back !== undefined && samples.length > storedWhileFull, `space freed; log: "${back}"`);
    // One sample per second of frames (frame k at k · 100 ms), none lost.
    const expected = Math.floor((frame - 1) / 10);
    check(
      name,
      contiguous && samples.length === expected && integrity === 'ok',
      `${samples.length} samples per zone stored of ${expected} intervals (${before} before the disk filled), contiguous, none lost; PRAGMA integrity_check: ${String(integrity)}`,
    );
    pipeline.stop();
    store.close();

    // A read-only data folder: the same filesystem remounted read-only (the store is closed: Linux
    // refuses to make a filesystem read-only while a file on it is open for writing).
    const roName = 'read-only data folder';
    const remount = spawnSync('mount', ['-o', 'remount,ro', mountPoint], { encoding: 'utf8' });
    if (remount.status !== 0) {
      check(roName, true, `skipped: cannot remount the tmpfs read-only (${remount.stderr.trim()})`);
    } else {
      let opened: Store | undefined;
      let message = '';
      try {
        opened = openStore(join(mountPoint, 'data', 'residuum.db'), { timeZone: 'UTC' });
      } catch (error) {
        message = (error as Error).message;
      }
      opened?.close();
      check(roName, opened === undefined && message.includes(join(mountPoint, 'data', 'residuum.db')), `openStore (the service's first step) refuses it, naming the file: "${message}"`);
      execFileSync('mount', ['-o', 'remount,rw', mountPoint]);
      const again = openStore(join(mountPoint, 'data', 'residuum.db'), { timeZone: 'UTC' });
      const kept = again.listSamples({ camera: 'cam', zone: 'entrance' }).length;
      again.close();
      check(roName, kept === samples.length, `writable again: the store opens with its ${kept} samples per zone`);
    }
  } finally {
    spawnSync('umount', [mountPoint]);
    rmSync(mountPoint, { recursive: true, force: true });
  }
}

const began = Date.now();
console.log('npm run faults: source and storage faults at real timing, all on this machine (loopback HTTP and DNS)\n');
const results = await Promise.allSettled([stall(), storm(), dnsFailure(), disk()]);
for (const [k, result] of results.entries()) {
  if (result.status === 'rejected') check(['stall', 'HTTP 500 storm', 'DNS failure', 'disk'][k], false, `failed: ${(result.reason as Error)?.stack ?? String(result.reason)}`);
}
let scenario = '';
for (const c of checks.sort((a, b) => ORDER.indexOf(a.scenario.split(' ')[0]) - ORDER.indexOf(b.scenario.split(' ')[0]))) {
  if (c.scenario !== scenario) console.log(`${(scenario = c.scenario)}:`);
  console.log(`  ${c.ok ? 'ok  ' : 'FAIL'} ${c.text}`);
}
const failed = checks.filter((c) => !c.ok).length;
console.log(`\n${checks.length - failed} of ${checks.length} checks ok in ${seconds(Date.now() - began)}${failed > 0 ? `; ${failed} FAILED` : ''}`);
process.exitCode = failed === 0 ? 0 : 1;
