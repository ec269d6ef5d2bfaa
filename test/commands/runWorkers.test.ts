import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startService, type RunningService, type StartServiceOptions } from '../../src/commands/run.ts';
import { validateConfig } from '../../src/config/loadConfig.ts';
import { saveModel } from '../../src/counting/modelFile.ts';
import { createScene, type SceneId } from '../../src/frames/synthetic/index.ts';
import type { StoredEvent } from '../../src/store/events.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { waitUntil } from '../service/waitUntil.ts';
import type { Log, LogLevel } from '../../src/domain/log.ts';

// The service with two cameras, each in its own worker thread: synthetic scenes (ours, nobody
// real) at 80×60, played 20 times as fast, one sample a second. One camera's worker is made to
// block its thread, crash or hang (WorkerFault, tests only); the other must go on counting.

const WIDTH = 80;
const HEIGHT = 60;
const root = mkdtempSync(join(tmpdir(), 'residuum-workers-'));
const models: Record<string, string> = {};
const ZONE = { id: 'floor', name: 'Floor', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] };

beforeAll(async () => {
  for (const [camera, scene] of [['a', 'reading-room'], ['b', 'stock-room']] as [string, SceneId][]) {
    const s = createScene(scene, { width: WIDTH, height: HEIGHT });
    const model = fitSubspace(Array.from({ length: 60 }, (_, i) => s.emptyFrameAt(i * 50).data), s, { components: 4 });
    models[camera] = join(root, `${camera}.rsdm`);
    await saveModel(models[camera], model, { source: `synthetic:${scene}:empty` });
  }
});
afterAll(() => rmSync(root, { recursive: true, force: true }));

interface Run {
  readonly service: RunningService;
  readonly lines: string[];
  /** The level each line was logged at (same order as lines). */
  readonly levels: (LogLevel | undefined)[];
  samples(camera: string, zone?: string): { time: number; intervalMs: number; value: number }[];
  events(camera: string): StoredEvent[];
}

let runs = 0;
async function start(options: Partial<StartServiceOptions>): Promise<Run> {
  const dir = join(root, `run-${++runs}`);
  const config = validateConfig(
    {
      site: { name: 'Residuum worker test', timeZone: 'UTC' },
      server: { host: '127.0.0.1', port: 0 },
      cameras: [
        { id: 'a', name: 'Camera A', source: { kind: 'synthetic', scene: 'reading-room', speed: 20 }, size: [WIDTH, HEIGHT], model: models.a, sampleSeconds: 1, zones: [ZONE] },
        { id: 'b', name: 'Camera B', source: { kind: 'synthetic', scene: 'stock-room', speed: 20 }, size: [WIDTH, HEIGHT], model: models.b, sampleSeconds: 1, zones: [ZONE] },
      ],
    },
    join(dir, 'residuum.yaml'),
  );
  const lines: string[] = [];
  const levels: (LogLevel | undefined)[] = [];
  const log: Log = (line, level) => {
    lines.push(line);
    levels.push(level);
  };
  const service = await startService(config, { dataDir: dir, port: 0, log, ...options });
  return {
    service,
    lines,
    levels,
    samples: (camera, zone = ZONE.id) => service.store.listSamples({ camera, zone }),
    events: (camera) => service.store.listEvents({ camera }),
  };
}

/** Threads of this process. check: Linux proc(5), `Threads:` in /proc/[pid]/status. A worker thread is one of them. */
function threads(): number {
  return Number(/^Threads:\s+(\d+)$/m.exec(readFileSync('/proc/self/status', 'utf8'))![1]);
}

/** Active handles and requests of this process by type, e.g. { Timeout: 2, FSReqCallback: 1 }. */
function resources(): Map<string, number> {
  const counts = new Map<string, number>();
  for (const type of process.getActiveResourcesInfo()) counts.set(type, (counts.get(type) ?? 0) + 1);
  return counts;
}

describe('the service runs each camera in its own worker thread', () => {
  it('keeps counting camera A while camera B blocks its thread, and stops both threads without leaving a handle', async () => {
    // check: Node.js process.getActiveResourcesInfo() lists what keeps the event loop alive
    // (handles such as timers, sockets, workers; requests); after stop() nothing of ours may remain.
    // Worker threads do not show among them, so the process's threads are counted too.
    const before = resources();
    const threadsBefore = threads();
    // B blocks its thread for good after 5 frames; the watchdog is off, so B stays blocked.
    const run = await start({ workerFaults: { b: { blockAfterFrames: 5 } }, workerStallMs: 0 });
    try {
      await waitUntil(() => run.lines.some((l) => l.startsWith('camera b: simulated fault: blocking the thread')), { what: 'camera b to block its thread' });
      // Logged in B's worker thread at warn: the level crosses to the main thread with the line.
      expect(run.levels[run.lines.findIndex((l) => l.startsWith('camera b: simulated fault'))]).toBe('warn');
      expect(threads()).toBeGreaterThanOrEqual(threadsBefore + 2);
      const bLast = run.service.cameras.get('b')!.live().lastFrameAt;
      const aBefore = run.samples('a').length;
      await waitUntil(() => run.samples('a').length >= aBefore + 3, { what: 'three more samples of camera a' });
      expect(run.service.cameras.get('a')!.live().state).toBe('online');
      // B's thread is blocked: it has delivered nothing since.
      expect(run.service.cameras.get('b')!.live().lastFrameAt).toBe(bLast);

      // Zones changed from the dashboard show at once and reach A's worker, which writes their samples.
      const half = { id: 'left', name: 'Left half', kind: 'room', polygon: [[0, 0], [0.5, 0], [0.5, 1], [0, 1]] };
      run.service.control.setZones('a', [ZONE, half]);
      expect(run.service.control.cameras().find((c) => c.camera === 'a')!.zones.map((z) => z.id)).toEqual(['floor', 'left']);
      await waitUntil(() => run.samples('a', 'left').length >= 1, { what: 'a sample of the new zone' });
      // The coarse mask preview reads A's last mask from shared memory.
      const preview = run.service.control.maskPreview('a', 8);
      expect(preview).toMatchObject({ width: Math.ceil(WIDTH / 8), height: Math.ceil(HEIGHT / 8) });
    } finally {
      await run.service.stop();
    }
    for (const host of run.service.cameras.values()) expect(host.running).toBe(false);
    // Closed handles leave the list once libuv has run their close callbacks: wait for that, a
    // leaked one never leaves.
    const settled = () => threads() <= threadsBefore && [...resources()].every(([type, n]) => n <= (before.get(type) ?? 0));
    await waitUntil(settled, { what: 'the handles of the service to close', timeoutMs: 10_000, intervalMs: 50 }).catch(() => {});
    const after = resources();
    for (const [type, n] of after) expect({ type, n }).toEqual({ type, n: Math.min(n, before.get(type) ?? 0) });
    expect(threads()).toBeLessThanOrEqual(threadsBefore);
  });

  it("reports a crashed worker (offline event), restarts it, and B counts again with a gap, not zeros, while A counts on", async () => {
    const run = await start({ workerFaults: { b: { crashAfterFrames: 30, starts: 1 } }, workerRestart: { initialMs: 200, maxMs: 400 } });
    try {
      const offline = await waitUntil(() => run.events('b').find((e) => e.type === 'offline'), { what: 'the offline event of camera b' });
      expect(offline.detail).toEqual({ reason: 'worker crashed (simulated crash after 30 frames)' });
      const crashed = run.lines.findIndex((l) => /^camera b: its worker crashed \(simulated crash after 30 frames\); restarting it in/.test(l));
      expect(crashed).toBeGreaterThanOrEqual(0);
      expect(run.levels[crashed]).toBe('error');
      const online = await waitUntil(() => run.events('b').find((e) => e.type === 'online' && e.time >= offline.time), { what: 'camera b online again' });
      await waitUntil(() => run.samples('b').some((s) => s.time > online.time), { what: 'a sample of camera b after the restart' });
      await waitUntil(() => run.samples('a').some((s) => s.time > online.time), { what: 'a sample of camera a after the restart' });
      expect(run.service.cameras.get('b')!.restarts).toBe(1);
      expect(run.service.cameras.get('b')!.live().state).toBe('online');
      expect(run.events('a').filter((e) => e.type === 'offline')).toEqual([]);
      // Gaps, never zeros: B's sample intervals never overlap, and none covers the crash.
      const b = run.samples('b');
      for (let i = 1; i < b.length; i++) expect(b[i].time - b[i].intervalMs).toBeGreaterThanOrEqual(b[i - 1].time);
      expect(b.some((s) => s.time - s.intervalMs < offline.time && s.time > offline.time)).toBe(false);
      // check: Prometheus text exposition format (metric{labels} value lines)
      const text = await run.service.metrics.render();
      expect(text).toMatch(/^residuum_camera_worker_restarts_total\{camera="b"\} 1$/m);
      expect(text).toMatch(/^residuum_camera_worker_restarts_total\{camera="a"\} 0$/m);
      expect(text).toMatch(/^residuum_camera_up\{camera="b"\} 1$/m);
      expect(text).toMatch(/^residuum_stage_seconds_count\{stage="count"\} [1-9]\d*$/m);
      expect(text).toMatch(/^residuum_stage_seconds_count\{stage="store"\} [1-9]\d*$/m);
      // The counter's own stages, forwarded from createCounter's stage times.
      for (const stage of ['residual', 'noise_scale', 'threshold', 'morphology', 'labelling', 'zones']) {
        expect(text).toMatch(new RegExp(`^residuum_stage_seconds_count\\{stage="${stage}"\\} [1-9]\\d*$`, 'm'));
      }
    } finally {
      await run.service.stop();
    }
  });

  it('terminates a worker that stopped answering (no heartbeat) and starts another', async () => {
    const run = await start({ workerFaults: { b: { blockAfterFrames: 5, starts: 1 } }, workerStallMs: 2500, workerRestart: { initialMs: 200, maxMs: 400 } });
    try {
      const offline = await waitUntil(() => run.events('b').find((e) => e.type === 'offline'), { what: 'the offline event of camera b' });
      expect((offline.detail as { reason: string }).reason).toMatch(/^worker unresponsive for \d+ s$/);
      await waitUntil(() => run.events('b').find((e) => e.type === 'online' && e.time >= offline.time), { what: 'camera b online again' });
      await waitUntil(() => run.samples('b').some((s) => s.time > offline.time), { what: 'a sample of camera b after the restart' });
      expect(run.service.cameras.get('b')!.restarts).toBe(1);
    } finally {
      await run.service.stop();
    }
  });
});
