import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { waitUntil } from '../service/waitUntil.ts';
import { jsonOf, startTestService, type TestService } from './testService.ts';

// Calibration from a few counts over HTTP, on the real service with the synthetic reading room
// (our invented scene, speed 10, 160×120).
let t: TestService;
const CAMERA = 'reading-room';
const admin = () => ({ Authorization: `Bearer ${t.adminKey}`, 'Content-Type': 'application/json' });
const give = (zone: string, body: unknown, headers: Record<string, string> = admin()) =>
  fetch(`${t.base}/api/cameras/${CAMERA}/zones/${zone}/calibration`, { method: 'POST', headers, body: JSON.stringify(body) });
const statusOf = async (zone: string) => (await jsonOf(await fetch(`${t.base}/api/cameras/${CAMERA}/calibration`))).zones.find((z: { zone: string }) => z.zone === zone);
const liveCount = async (zone: string): Promise<number> =>
  (await jsonOf(await fetch(`${t.base}/api/live`))).cameras.find((c: { camera: string }) => c.camera === CAMERA).zones.find((z: { id: string }) => z.id === zone).count;

beforeAll(async () => {
  t = await startTestService();
  await waitUntil(async () => (await jsonOf(await fetch(`${t.base}/api/live`))).cameras[0]?.lastFrameAt !== undefined, { what: 'the first counted frame' });
}, 180_000);
afterAll(async () => {
  await t?.stop();
});

describe('calibration from a few counts', () => {
  it('needs the admin key and a whole number of people, and a room zone of the camera', async () => {
    expect((await give('entrance', { count: 2 }, { 'Content-Type': 'application/json' })).status).toBe(401);
    for (const bad of [{ count: -1 }, { count: 2.5 }, { count: '3' }, {}, { count: 2, extra: 1 }]) {
      const res = await give('entrance', bad);
      expect(res.status).toBe(400);
      expect((await jsonOf(res)).error).toMatch(/request body: (count must be a whole number of people from 0 to 10000|extra is not expected)/);
    }
    const missing = await give('nowhere', { count: 1 });
    expect(missing.status).toBe(404);
    expect((await jsonOf(missing)).error).toMatch(/has no zone "nowhere"/);
  });

  it('counts a zone by its regression once it beats blob sizes, and forgets it on request', async () => {
    // The entrance holds 0–3 people; say there are 5 or 6 each time: blob sizes are then off by
    // about 4, the regression (mostly its intercept) by about 0.5, so it is used.
    let status;
    for (const count of [5, 6, 5, 6, 5, 6]) {
      const res = await give('entrance', { count });
      expect(res.status, JSON.stringify(await res.clone().json())).toBe(200);
      status = await jsonOf(res);
      await new Promise((done) => setTimeout(done, 300));
    }
    expect(status.points).toHaveLength(6);
    expect(status.points.map((p: { count: number }) => p.count)).toEqual([5, 6, 5, 6, 5, 6]);
    expect(status.fit.ruleError).toBeGreaterThan(2);
    expect(status.inUse).toBe(true);
    expect(status.text).toMatch(/Entrance: 6 counts given; .*calibration used/);
    expect(await statusOf('stacks')).toMatchObject({ points: [], inUse: false, fit: { reason: 'needs at least 5 counts, 0 given' } });
    // The live count follows the regression (smoothed over 5 frames).
    await waitUntil(async () => (await liveCount('entrance')) >= 4, { what: 'the entrance counted by its regression', timeoutMs: 30_000 });
    // Only numbers are kept.
    const columns = (t.service.store.db.prepare('PRAGMA table_info(calibration_points)').all() as { name: string; type: string }[]).map((c) => `${c.name} ${c.type}`);
    expect(columns).toEqual(['id INTEGER', 'camera TEXT', 'zone TEXT', 'time INTEGER', 'count INTEGER', 'rule REAL', 'area REAL', 'edge REAL', 'blobs REAL', 'zone_shape TEXT', 'given_by TEXT']);
    const events = t.service.store.listEvents({ camera: CAMERA, type: 'calibration-added' });
    expect(events).toHaveLength(6);
    expect(events[0].zone).toBe('entrance');
    expect(events[0].detail).toMatchObject({ count: 5, by: 'admin' });

    const cleared = await fetch(`${t.base}/api/cameras/${CAMERA}/zones/entrance/calibration`, { method: 'DELETE', headers: admin() });
    expect(await jsonOf(cleared)).toEqual({ camera: CAMERA, zone: 'entrance', removed: 6 });
    expect(await statusOf('entrance')).toMatchObject({ points: [], inUse: false });
    await waitUntil(async () => (await liveCount('entrance')) <= 3, { what: 'the entrance counted by blob sizes again', timeoutMs: 30_000 });
  }, 120_000);

  it('does not use counts given for an earlier shape of the zone', async () => {
    for (const count of [1, 2, 1, 2, 1]) expect((await give('stacks', { count })).status).toBe(200);
    expect((await statusOf('stacks')).points).toHaveLength(5);
    const zones = (await jsonOf(await fetch(`${t.base}/api/cameras/${CAMERA}/zones`, { headers: admin() }))).zones;
    const moved = zones.map((z: { id: string; polygon: number[][] }) => (z.id === 'stacks' ? { ...z, polygon: z.polygon.map(([x, y]) => [x, Math.min(1, y + 0.02)]) } : z));
    const saved = await fetch(`${t.base}/api/cameras/${CAMERA}/zones`, { method: 'PUT', headers: admin(), body: JSON.stringify({ zones: moved }) });
    expect(saved.status).toBe(200);
    expect(await statusOf('stacks')).toMatchObject({ points: [], earlierShape: 5, inUse: false });
  }, 60_000);
});
