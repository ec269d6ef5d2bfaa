import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { hourlyRows, writeHourlyCsv } from '../../src/outputs/hourlyCsv.ts';
import { createApp } from '../../src/server/createApp.ts';
import { prepareTokens } from '../../src/server/tokens.ts';
import type { Sample } from '../../src/store/index.ts';
import { addCameraWithZones, tempStore, type TempStore } from '../store/tempStore.ts';

// Long history and export reads (issue: anonymous ten-year exports on a database with months of
// data stalled the live answers). A year of hourly samples (invented values) for one room and
// one shelf; the site in Europe/Berlin so that the ranges cross DST changes.
const TIME_ZONE = 'Europe/Berlin';
const YEAR_START = Date.UTC(2025, 0, 1);
let t: TempStore;
let server: Server;
let base: string;
let adminKey: string;

beforeAll(async () => {
  t = tempStore({ timeZone: TIME_ZONE });
  addCameraWithZones(t.store, YEAR_START - 3_600_000);
  const samples: Sample[] = [];
  for (let h = 1; h <= 365 * 24; h++) {
    const time = YEAR_START + h * 3_600_000;
    samples.push({ time, camera: 'cam', zone: 'room', value: h % 7, kind: 'count', intervalMs: 3_600_000 });
    samples.push({ time, camera: 'cam', zone: 'shelf', value: (h % 10) / 10, kind: 'fill', intervalMs: 3_600_000 });
  }
  t.store.insertSamples(samples);
  adminKey = prepareTokens(t.store).admin!;
  const app = createApp({ store: t.store, live: () => [], siteName: 'long reads', timeZone: TIME_ZONE, startedAt: Date.now() });
  server = await new Promise<Server>((done) => {
    const s = app.listen(0, '127.0.0.1', () => done(s));
  });
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
}, 60_000);
afterAll(async () => {
  server.closeAllConnections();
  await new Promise((done) => server.close(done));
  t.cleanup();
});

const admin = () => ({ Authorization: `Bearer ${adminKey}` });

describe('long history and export reads', () => {
  it('refuse a range over 400 days with a 400 naming the field and the limit', async () => {
    for (const route of ['history', 'export/hourly.csv']) {
      const res = await fetch(`${base}/api/${route}?from=2015-01-01&to=2025-12-31`, { headers: admin() });
      expect(res.status, route).toBe(400);
      expect(((await res.json()) as { error: string }).error, route).toMatch(/^to: the range from 2015-01-01 to 2025-12-31 is \d+ days; at most 400 days per request/);
    }
  });

  it('give exactly the rows of one whole read, though read and sent a day at a time', async () => {
    const range = { from: '2025-02-10', to: '2025-11-20' };
    const whole = hourlyRows(t.store, { ...range, timeZone: TIME_ZONE });
    const csv = await fetch(`${base}/api/export/hourly.csv?from=${range.from}&to=${range.to}`, { headers: admin() });
    expect(csv.status).toBe(200);
    // The same bytes as `residuum export` (writeHourlyCsv over hourlyRows of the whole range).
    expect(await csv.text()).toBe(writeHourlyCsv(whole));
    const history = (await (await fetch(`${base}/api/history?from=${range.from}&to=${range.to}`, { headers: admin() })).json()) as { rows: unknown[] };
    expect(history.rows).toEqual(JSON.parse(JSON.stringify(whole)));
    expect(history).toMatchObject({ timeZone: TIME_ZONE, from: range.from, to: range.to });
    // Bounds in the middle of an hour, across the spring DST change (ISO 8601 times with offset).
    const from = '2025-03-25T22:30:00+01:00';
    const to = '2025-04-02T05:45:00+02:00';
    const part = await fetch(`${base}/api/export/hourly.csv?from=${encodeURIComponent(from)}&to=${encodeURIComponent(to)}`, { headers: admin() });
    expect(await part.text()).toBe(writeHourlyCsv(hourlyRows(t.store, { from, to, timeZone: TIME_ZONE })));
  });

  it('read a long export in bounded chunks, with the event loop free between them', async () => {
    // The store's rollup query is watched: each call's range and how many turns of the event
    // loop (a setImmediate ticker) had passed when it was made.
    const original = t.store.listRollups;
    const calls: { hours: number; turn: number }[] = [];
    let turn = 0;
    let ticking = true;
    const tick = () => {
      turn++;
      if (ticking) setImmediate(tick);
    };
    setImmediate(tick);
    t.store.listRollups = (query = {}) => {
      calls.push({ hours: ((query.to ?? 0) - (query.from ?? 0)) / 3_600_000, turn });
      return original(query);
    };
    try {
      const res = await fetch(`${base}/api/export/hourly.csv?from=2025-01-01&to=2025-12-31`, { headers: admin() });
      expect(res.status).toBe(200);
      expect((await res.text()).split('\r\n').length).toBe(365 * 24 * 2 + 2);
    } finally {
      t.store.listRollups = original;
      ticking = false;
    }
    // A day at a time (24 local hours; 25 across the autumn DST change).
    expect(calls.length).toBe(365);
    for (const c of calls) expect(c.hours).toBeLessThanOrEqual(25);
    for (let i = 1; i < calls.length; i++) expect(calls[i].turn, `the event loop turned before chunk ${i}`).toBeGreaterThan(calls[i - 1].turn);
  });

  it('limit long reads without a key per address (429 with Retry-After); a key is not limited', async () => {
    // Each read to its end (a read runs until its last row is sent; two at once is the limit).
    const long = async (headers: Record<string, string> = {}) => {
      const res = await fetch(`${base}/api/history?from=2025-01-01&to=2025-06-30&camera=cam`, { headers });
      const body = await res.text();
      return { status: res.status, headers: res.headers, json: () => JSON.parse(body) };
    };
    // This address already made long reads with the admin key above; those do not count.
    for (let i = 0; i < 6; i++) expect((await long()).status).toBe(200);
    const refused = await long();
    expect(refused.status).toBe(429);
    expect(Number(refused.headers.get('retry-after'))).toBeGreaterThan(0);
    expect(refused.json().error).toMatch(/too many long reads from this address: at most 6 ranges over 31 days per 10 minutes without a key/);
    // Short reads (the dashboard's day and week) and reads with a key still go through.
    expect((await fetch(`${base}/api/history?from=2025-03-01&to=2025-03-07`)).status).toBe(200);
    expect((await long(admin())).status).toBe(200);
  });
});
