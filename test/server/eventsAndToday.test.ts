import { DateTime } from 'luxon';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { jsonOf, startTestService, TEST_TIME_ZONE, type TestService } from './testService.ts';

// The camera event log and today's peaks, over HTTP from the real service. Camera `door` has no
// source (offline), so the samples and events written here by hand are the only ones it has.
let t: TestService;
const CAMERA = 'door';
const ZONE = 'door-way';
const MIN = 60_000;
const now = Date.now();

beforeAll(async () => {
  t = await startTestService({ offlineCamera: true });
});
afterAll(async () => {
  await t?.stop();
});

describe('GET /api/cameras/:id/events', () => {
  it('lists the last days newest first, with who caused each, and names bad parameters', async () => {
    const store = t.service.store;
    store.insertEvent({ time: now - 8 * 86_400_000, camera: CAMERA, type: 'online' });
    store.insertEvent({ time: now - 120 * MIN, camera: CAMERA, type: 'offline', detail: { reason: 'folder not found' } });
    store.insertEvent({ time: now - 60 * MIN, camera: CAMERA, type: 'settings-changed', detail: { what: 'zones', zones: [ZONE] } });
    store.insertEvent({ time: now - 30 * MIN, camera: CAMERA, type: 'model-activated', detail: { model: 3, by: 'admin' } });
    store.insertEvent({ time: now - 10 * MIN, camera: CAMERA, zone: ZONE, type: 'capacity-exceeded', detail: { count: 3, capacity: 2 } });
    const body = await jsonOf(await fetch(`${t.base}/api/cameras/${CAMERA}/events`));
    expect(body.camera).toBe(CAMERA);
    // The week before now, newest first; the start-up's own offline event may be among them.
    const mine = body.events.filter((e: { time: number }) => e.time < now);
    expect(mine.map((e: { type: string; by: string; zone: string | null }) => [e.type, e.by, e.zone])).toEqual([
      ['capacity-exceeded', 'service', ZONE],
      ['model-activated', 'admin', null],
      ['settings-changed', 'admin', null],
      ['offline', 'service', null],
    ]);
    expect(mine[3].detail).toEqual({ reason: 'folder not found' });
    const month = await jsonOf(await fetch(`${t.base}/api/cameras/${CAMERA}/events?days=30`));
    expect(month.events.filter((e: { time: number }) => e.time < now)).toHaveLength(5);

    const bad = await fetch(`${t.base}/api/cameras/${CAMERA}/events?days=0`);
    expect(bad.status).toBe(400);
    expect((await jsonOf(bad)).error).toMatch(/^query parameter days must be a whole number from 1 to 90/);
    const unknown = await fetch(`${t.base}/api/cameras/nobody/events`);
    expect(unknown.status).toBe(404);
  });
});

describe('GET /api/today', () => {
  it("gives each zone's highest and lowest sample since local midnight and when", async () => {
    const midnight = DateTime.fromMillis(now, { zone: TEST_TIME_ZONE }).startOf('day').toMillis();
    const span = now - midnight;
    const interval = Math.max(1000, Math.min(MIN, Math.floor(span / 10)));
    const at = (share: number) => midnight + Math.round(share * span);
    // Yesterday's busier sample must not count; today 1, then 5 (the peak), then 0.5 (the low), then 2.
    t.service.store.insertSamples([
      { camera: CAMERA, zone: ZONE, kind: 'count', time: midnight - MIN, intervalMs: MIN, value: 9 },
      { camera: CAMERA, zone: ZONE, kind: 'count', time: at(0.3), intervalMs: interval, value: 1 },
      { camera: CAMERA, zone: ZONE, kind: 'count', time: at(0.5), intervalMs: interval, value: 5 },
      { camera: CAMERA, zone: ZONE, kind: 'count', time: at(0.7), intervalMs: interval, value: 0.5 },
      { camera: CAMERA, zone: ZONE, kind: 'count', time: at(0.9), intervalMs: interval, value: 2 },
    ]);
    const body = await jsonOf(await fetch(`${t.base}/api/today`));
    expect(body.timeZone).toBe(TEST_TIME_ZONE);
    // check: local midnight by luxon (IANA tz database)
    expect(body.from).toBe(midnight);
    const zone = body.zones.find((z: { camera: string; zone: string }) => z.camera === CAMERA && z.zone === ZONE);
    expect(zone).toEqual({ camera: CAMERA, zone: ZONE, peak: 5, peakAt: at(0.5), low: 0.5, lowAt: at(0.7) });
  });
});
