import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { READING_ROOM_ZONES, startTestService, type TestService } from '../server/testService.ts';
import { waitUntil } from './waitUntil.ts';

// Issue: removing a zone in the dashboard cost every other zone of the camera its open interval —
// the zone's row was marked removed before the camera thread wrote the interval, and the
// all-or-nothing write of that interval then failed for all zones. The samples of one zone tile
// time without gaps while the camera counts (src/counting/cameraPipeline.ts: each interval starts
// where the last ended), so a lost interval shows as a gap.
let t: TestService;
beforeAll(async () => {
  t = await startTestService();
});
afterAll(async () => {
  await t?.stop();
});

describe('removing a zone', () => {
  it('keeps the other zones’ samples: no gap around the change, and the removed zone’s last interval is kept too', async () => {
    const store = t.service.store;
    const samples = (zone: string) => store.listSamples({ camera: 'reading-room', zone });
    await waitUntil(() => samples('entrance').length >= 2, { what: 'two samples of the entrance' });
    const removedAt = Date.now();
    const res = await fetch(`${t.base}/api/cameras/reading-room/zones`, {
      method: 'PUT',
      headers: { Authorization: `Bearer ${t.adminKey}`, 'Content-Type': 'application/json' },
      body: JSON.stringify({ zones: READING_ROOM_ZONES.filter((z) => z.id !== 'tables') }),
    });
    expect(res.status).toBe(200);
    // Two more samples after the change.
    await waitUntil(() => samples('entrance').filter((s) => s.time > removedAt).length >= 2, { what: 'samples after the change' });
    for (const zone of ['entrance', 'stacks']) {
      const list = samples(zone);
      for (let i = 1; i < list.length; i++) {
        expect(list[i].time - list[i].intervalMs, `${zone}: sample ${i} starts where sample ${i - 1} ended`).toBe(list[i - 1].time);
      }
    }
    // The removed zone: its interval open at the change was stored, none after.
    const tables = samples('tables');
    const entrance = samples('entrance');
    const lastBefore = entrance.filter((s) => s.time - s.intervalMs < removedAt).at(-1)!;
    expect(tables.at(-1)!.time).toBe(lastBefore.time);
  }, 60_000);
});
