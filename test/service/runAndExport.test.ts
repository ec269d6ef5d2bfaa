import { mkdtempSync, rmSync } from 'node:fs';
import { once } from 'node:events';
import type { AddressInfo } from 'node:net';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { parse } from 'csv-parse/sync';
import { DateTime } from 'luxon';
import { afterEach, describe, expect, it } from 'vitest';
import { startService, type RunningService } from '../../src/commands/run.ts';
import { loadConfig } from '../../src/config/loadConfig.ts';
import { createApp } from '../../src/server/createApp.ts';
import { openStore } from '../../src/store/index.ts';
import { spawnResiduum, type RunningChild } from './spawnResiduum.ts';
import { demoRoomZoneIds, demoTimeZone, testConfig } from './testConfig.ts';
import { waitUntil } from './waitUntil.ts';
import { logRecords } from './logRecords.ts';

const HOUR = 3_600_000;
const dirs: string[] = [];
const cleanups: (() => Promise<void> | void)[] = [];
afterEach(async () => {
  for (const c of cleanups.splice(0).reverse()) await c();
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});
function tempDir(): string {
  const dir = mkdtempSync(join(tmpdir(), 'residuum-service-'));
  dirs.push(dir);
  return dir;
}

interface SampleRow {
  camera: string;
  zone: string;
  time: number;
  interval_ms: number;
  value: number;
  kind: string;
}

/** Reads the samples straight from the file with a read-only connection (not through the store code). */
function readSamples(file: string): SampleRow[] {
  const db = new Database(file, { readonly: true, fileMustExist: true });
  try {
    return db.prepare('SELECT camera, zone, time, interval_ms, value, kind FROM samples ORDER BY camera, zone, time').all() as SampleRow[];
  } finally {
    db.close();
  }
}

function readZones(file: string): { id: string; created: number }[] {
  const db = new Database(file, { readonly: true, fileMustExist: true });
  try {
    return db.prepare("SELECT id, created FROM zones WHERE camera = 'reading-room'").all() as { id: string; created: number }[];
  } finally {
    db.close();
  }
}

function sampleCount(file: string): number {
  try {
    const db = new Database(file, { readonly: true, fileMustExist: true });
    try {
      return (db.prepare('SELECT count(*) AS n FROM samples').get() as { n: number }).n;
    } finally {
      db.close();
    }
  } catch {
    return 0; // not created yet, or the schema not yet there
  }
}

const HEADER = ['hour_start', 'camera', 'zone', 'mean', 'max', 'min', 'occupied_share', 'coverage', 'samples'];

describe('the service in-process, then residuum export', () => {
  it('counts the synthetic reading room live, serves health and live counts, and exports the day as the API does', async () => {
    const dir = tempDir();
    const config = loadConfig(testConfig(dir));
    const dataDir = join(dir, 'data');
    const zoneIds = demoRoomZoneIds();
    let service: RunningService | undefined = await startService(config, { dataDir, port: 0 });
    cleanups.push(async () => service?.stop());
    expect(service.port).toBeGreaterThan(0);
    expect(service.server.address()).toMatchObject({ address: '127.0.0.1' });

    // At least three samples per zone (a sample per second of wall time, after the first frames).
    await waitUntil(
      () => {
        const rows = service!.store.db.prepare('SELECT zone, count(*) AS n FROM samples GROUP BY zone').all() as { zone: string; n: number }[];
        return rows.length === zoneIds.length && rows.every((r) => r.n >= 3);
      },
      { what: 'three samples per zone', timeoutMs: 240_000 },
    );

    const base = `http://127.0.0.1:${service.port}`;
    const health = (await (await fetch(`${base}/api/health`)).json()) as { cameras: { lastFrameAt: unknown }[] };
    expect(health).toMatchObject({ ok: true, site: 'Residuum service test', timeZone: demoTimeZone });
    expect(health.cameras).toEqual([expect.objectContaining({ camera: 'reading-room', state: 'online', viewChanged: false })]);
    expect(typeof health.cameras[0].lastFrameAt).toBe('number');

    const liveResponse = await fetch(`${base}/api/live`);
    expect(liveResponse.headers.get('content-type')).toMatch(/^application\/json/);
    const live = (await liveResponse.json()) as { cameras: { zones: { id: string; kind: string; count: number; fill: number }[] }[] };
    expect(live.cameras).toHaveLength(1);
    const camera = live.cameras[0];
    expect(camera).toMatchObject({ camera: 'reading-room', name: 'Reading room', state: 'online' });
    expect(camera.zones.map((z: { id: string }) => z.id)).toEqual(zoneIds);
    for (const z of camera.zones) {
      expect(z.kind).toBe('room');
      expect(Number.isFinite(z.count) && z.count >= 0).toBe(true);
      expect(z.fill >= 0 && z.fill <= 1).toBe(true);
    }
    expect((await fetch(`${base}/api/nothing`)).status).toBe(404);

    await service.stop();
    service = undefined;

    // The local day (site zone) of the last sample: the export below covers it.
    const file = join(dataDir, 'residuum.db');
    const samples = readSamples(file);
    const last = Math.max(...samples.map((s) => s.time));
    const day = DateTime.fromMillis(last - 1, { zone: demoTimeZone }).startOf('day'); // check: luxon, IANA tz database
    const date = day.toISODate()!;
    const dayStart = day.toMillis();
    const dayEnd = day.plus({ days: 1 }).startOf('day').toMillis();

    const exportStarted = Date.now();
    const exported = spawnResiduum(['export', '--data', dataDir, '--from', date, '--to', date]);
    const { code } = await exported.exit(120_000);
    const exportEnded = Date.now();
    expect(code, exported.stderr().toString('utf8')).toBe(0);
    const csv = exported.stdout();
    // check: RFC 4180 (CRLF records, header row); csv-parse as the independent parser
    const records = parse(csv, { record_delimiter: '\r\n' }) as string[][];
    expect(records[0]).toEqual(HEADER);
    const rows = records.slice(1).map((r) => Object.fromEntries(HEADER.map((h, i) => [h, r[i]])));
    expect(rows.length).toBeGreaterThan(0);

    // Hour starts: ISO 8601 local time with offset, each the start of a local hour of that day.
    const hourStarts = new Map<number, string>();
    for (let h = day; h.toMillis() < dayEnd; h = h.plus({ hours: 1 })) hourStarts.set(h.toMillis(), h.toISO({ suppressMilliseconds: true })!);
    const zoneCreated = new Map(readZones(file).map((z) => [z.id, z.created]));
    for (const r of rows) {
      expect(r.hour_start).toMatch(/^\d{4}-\d{2}-\d{2}T\d{2}:00:00[+-]\d{2}:\d{2}$/);
      const at = DateTime.fromISO(r.hour_start, { setZone: true });
      expect(at.isValid).toBe(true);
      expect(hourStarts.get(at.toMillis()), r.hour_start).toBe(r.hour_start); // same wall clock and offset as luxon's
      expect(r.camera).toBe('reading-room');
      expect(zoneIds).toContain(r.zone);
    }
    // Every hour from the zone's creation to the current hour has a row, once (data or not); hours
    // that have not begun have none (an hour may begin while the export runs: either is right then).
    for (const zone of zoneIds) {
      const upTo = (now: number) => [...hourStarts.keys()].filter((h) => h + HOUR > zoneCreated.get(zone)! && h <= now).map((h) => hourStarts.get(h));
      const got = rows.filter((r) => r.zone === zone).map((r) => r.hour_start);
      expect([upTo(exportStarted), upTo(exportEnded)]).toContainEqual(got);
    }

    // Values: in range, and as recomputed here from the raw samples with the documented definitions
    // (time-weighted mean over the covered part of the hour, coverage = covered share of the hour,
    // samples = samples whose interval ends in the hour).
    const num = (s: string) => Number(s);
    for (const r of rows) {
      const hourStart = DateTime.fromISO(r.hour_start).toMillis();
      const hourEnd = hourStart + HOUR;
      let covered = 0;
      let weighted = 0;
      let occupied = 0;
      let ending = 0;
      let max = -Infinity;
      let min = Infinity;
      for (const s of samples) {
        if (s.zone !== r.zone) continue;
        const overlap = Math.min(s.time, hourEnd) - Math.max(s.time - s.interval_ms, hourStart);
        if (overlap > 0) {
          covered += overlap;
          weighted += s.value * overlap;
          if (s.value > 0) occupied += overlap;
          max = Math.max(max, s.value);
          min = Math.min(min, s.value);
        }
        if (s.time - 1 >= hourStart && s.time - 1 < hourEnd) ending++;
      }
      expect(num(r.samples)).toBe(ending);
      expect(Math.abs(num(r.coverage) - covered / HOUR)).toBeLessThanOrEqual(0.0005 + 1e-9);
      expect(num(r.coverage) >= 0 && num(r.coverage) <= 1).toBe(true);
      if (covered === 0) {
        expect([r.mean, r.max, r.min, r.occupied_share]).toEqual(['', '', '', '']);
        continue;
      }
      expect(Math.abs(num(r.mean) - weighted / covered)).toBeLessThanOrEqual(0.0005 + 1e-9);
      expect(Math.abs(num(r.max) - max)).toBeLessThanOrEqual(0.0005 + 1e-9);
      expect(Math.abs(num(r.min) - min)).toBeLessThanOrEqual(0.0005 + 1e-9);
      expect(Math.abs(num(r.occupied_share) - occupied / covered)).toBeLessThanOrEqual(0.0005 + 1e-9);
      expect(0 <= num(r.min) && num(r.min) <= num(r.mean) && num(r.mean) <= num(r.max) && num(r.max) <= 1000).toBe(true);
      expect(num(r.occupied_share) >= 0 && num(r.occupied_share) <= 1).toBe(true);
    }
    // The samples column adds up to the day's samples in the database.
    const inDay = samples.filter((s) => s.time - 1 >= dayStart && s.time - 1 < dayEnd).length;
    expect(inDay).toBeGreaterThan(0);
    expect(rows.reduce((n, r) => n + num(r.samples), 0)).toBe(inDay);

    // The same file from the HTTP route, over the same (now final) database: same bytes. The service
    // is stopped so that no sample arrives between the two; the app is the one startService serves.
    const store = openStore(file);
    cleanups.push(() => store.close());
    const app = createApp({ store, live: () => [], siteName: config.site.name, timeZone: config.site.timeZone, startedAt: Date.now() });
    const server = app.listen(0, '127.0.0.1');
    await once(server, 'listening');
    cleanups.push(() => new Promise<void>((done) => server.close(() => done())));
    const port = (server.address() as AddressInfo).port;
    const response = await fetch(`http://127.0.0.1:${port}/api/export/hourly.csv?from=${date}&to=${date}`);
    expect(response.status).toBe(200);
    expect(response.headers.get('content-type')).toBe('text/csv; charset=utf-8');
    expect(Buffer.from(await response.arrayBuffer()).equals(csv)).toBe(true);
  }, 400_000);
});

describe('residuum run as a process', () => {
  const serving = /serving the API at http:\/\/127\.0\.0\.1:(\d+)\/api\/live/;

  async function runUntilSamples(configFile: string, dataDir: string, atLeast: number): Promise<RunningChild> {
    const run = spawnResiduum(['run', '--config', configFile, '--data', dataDir, '--port', '0']);
    cleanups.push(() => {
      if (run.child.exitCode === null && run.child.signalCode === null) run.child.kill('SIGKILL');
    });
    const port = Number((await run.waitForOutput(serving, 240_000))[1]);
    expect(port).toBeGreaterThan(0);
    const health = (await (await fetch(`http://127.0.0.1:${port}/api/health`)).json()) as { ok: boolean };
    expect(health.ok).toBe(true);
    const file = join(dataDir, 'residuum.db');
    await waitUntil(() => sampleCount(file) >= atLeast, { what: `${atLeast} samples in ${file}`, timeoutMs: 120_000 });
    return run;
  }

  it('serves, stops on SIGTERM with exit code 0, and leaves samples; a restart continues the same database', async () => {
    const dir = tempDir();
    const configFile = testConfig(dir);
    const dataDir = join(dir, 'data');
    const file = join(dataDir, 'residuum.db');

    const first = await runUntilSamples(configFile, dataDir, 1);
    first.child.kill('SIGTERM');
    const exit = await first.exit(120_000);
    expect(exit, first.stderr().toString('utf8')).toEqual({ code: 0, signal: null });
    expect(logRecords(first.stdout()).map((r) => r.msg).slice(-2)).toEqual(['stopping', 'stopped']);
    const afterFirst = sampleCount(file);
    expect(afterFirst).toBeGreaterThan(0);

    // Second run on the same data: it takes the stored model (no learning) and adds samples after
    // the stored ones without any refused (overlapping) sample.
    const second = await runUntilSamples(configFile, dataDir, afterFirst + 3);
    second.child.kill('SIGTERM');
    expect(await second.exit(120_000)).toEqual({ code: 0, signal: null });
    const log = second.stdout().toString('utf8') + second.stderr().toString('utf8');
    expect(log).not.toMatch(/learned the empty/);
    expect(log).not.toMatch(/could not store/);
    const db = new Database(file, { readonly: true });
    try {
      expect(db.pragma('integrity_check', { simple: true })).toBe('ok');
      expect((db.prepare('SELECT count(*) AS n FROM models').get() as { n: number }).n).toBe(1);
    } finally {
      db.close();
    }
  }, 600_000);

  it('exits with code 1 naming the address when the port is taken', async () => {
    const dir = tempDir();
    const configFile = testConfig(dir);
    const blocker = createServer();
    blocker.listen(0, '127.0.0.1');
    await once(blocker, 'listening');
    cleanups.push(() => new Promise<void>((done) => blocker.close(() => done())));
    const port = (blocker.address() as AddressInfo).port;
    const run = spawnResiduum(['run', '--config', configFile, '--data', join(dir, 'data'), '--port', String(port)]);
    const exit = await run.exit(300_000);
    expect(exit.code, run.stdout().toString('utf8')).toBe(1);
    expect(run.stdout().toString('utf8')).not.toMatch(/serving the API/);
    expect(run.stderr().toString('utf8')).toContain(`cannot listen on 127.0.0.1:${port}`);
    expect(run.stderr().toString('utf8')).toContain('EADDRINUSE');
    // The same reason in the JSON log, at level fatal, for whoever reads only the log.
    expect(logRecords(run.stdout()).filter((r) => r.level === 'fatal').map((r) => r.msg)).toEqual([expect.stringContaining(`cannot listen on 127.0.0.1:${port}`)]);
  }, 400_000);
});
