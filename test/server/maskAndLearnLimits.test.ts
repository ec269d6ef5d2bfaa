import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { waitUntil } from '../service/waitUntil.ts';
import { jsonOf, startTestService, type TestService } from './testService.ts';

// The coarse foreground mask and re-learning (issue: the mask could be polled at full frame rate
// with 2-pixel cells — a silhouette video — and learning could be started without limit).
let t: TestService;
const CAMERA = 'reading-room';
beforeAll(async () => {
  t = await startTestService();
  await waitUntil(async () => (await fetch(`${t.base}/api/cameras/${CAMERA}/mask?cell=32`, { headers: admin() })).status === 200, { what: 'a first mask' });
  await new Promise((done) => setTimeout(done, 1100));
});
afterAll(async () => {
  await t?.stop();
});
const admin = () => ({ Authorization: `Bearer ${t.adminKey}` });

describe('the coarse mask', () => {
  it('has cells of at least 8 pixels, is admin only, never cached, and limited to 2 a second per camera', async () => {
    const small = await fetch(`${t.base}/api/cameras/${CAMERA}/mask?cell=4`, { headers: admin() });
    expect(small.status).toBe(400);
    expect((await jsonOf(small)).error).toBe('query parameter cell must be a whole number from 8 to 32');
    expect((await fetch(`${t.base}/api/cameras/${CAMERA}/mask`)).status).toBe(401);
    const first = await fetch(`${t.base}/api/cameras/${CAMERA}/mask`, { headers: admin() });
    expect(first.status).toBe(200);
    expect(first.headers.get('cache-control')).toBe('no-store');
    expect(await jsonOf(first)).toMatchObject({ cell: 8, width: 20, height: 15 });
    expect((await fetch(`${t.base}/api/cameras/${CAMERA}/mask?format=png`, { headers: admin() })).status).toBe(200);
    const third = await fetch(`${t.base}/api/cameras/${CAMERA}/mask`, { headers: admin() });
    expect(third.status).toBe(429);
    expect(Number(third.headers.get('retry-after'))).toBeGreaterThanOrEqual(1);
    expect((await jsonOf(third)).error).toMatch(/^the foreground preview of camera reading-room is limited to 2 a second; try again in \d+ ms/);
  });
});

describe('re-learning', () => {
  it('starts at most once a minute per camera (429 with Retry-After)', async () => {
    const url = `${t.base}/api/cameras/${CAMERA}/learn`;
    const post = () => fetch(url, { method: 'POST', headers: { ...admin(), 'Content-Type': 'application/json' }, body: '{"seconds": 1}' });
    expect((await post()).status).toBe(202);
    await waitUntil(async () => (await jsonOf(await fetch(url))).status.state !== 'learning', { what: 'the learning to end' });
    const again = await post();
    expect(again.status).toBe(429);
    const wait = Number(again.headers.get('retry-after'));
    expect(wait).toBeGreaterThan(0);
    expect(wait).toBeLessThanOrEqual(60);
    expect((await jsonOf(again)).error).toMatch(/^learning of camera reading-room may start at most once a minute and 10 times an hour; try again in \d+ s/);
  }, 60_000);
});
