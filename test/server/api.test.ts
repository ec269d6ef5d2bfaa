import crypto from 'node:crypto';
import { readFileSync } from 'node:fs';
import { request } from 'node:http';
import type { AddressInfo } from 'node:net';
import { parse } from 'csv-parse/sync';
import { DateTime } from 'luxon';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { createApp } from '../../src/server/createApp.ts';
import { failureLimiter } from '../../src/server/failureLimiter.ts';
import { jsonOf, readEvents, startTestService, TEST_TIME_ZONE, type TestService } from './testService.ts';

// The real service on the synthetic reading room (speed 10, 160×120), driven over HTTP on 127.0.0.1.
let t: TestService;
const CAMERA = 'reading-room';
const HOUR = 3_600_000;
/** A local day three days ago: samples written there by hand do not meet the live counter's. */
const day = DateTime.now().setZone(TEST_TIME_ZONE).minus({ days: 3 }).toISODate()!;

beforeAll(async () => {
  t = await startTestService();
  // Two half-hour samples of the entrance on `day`, 10:00–10:30 at 2 and 10:30–11:00 at 4 people.
  const ten = DateTime.fromISO(`${day}T10:00`, { zone: TEST_TIME_ZONE }).toMillis();
  t.service.store.insertSamples([
    { camera: CAMERA, zone: 'entrance', kind: 'count', time: ten + HOUR / 2, intervalMs: HOUR / 2, value: 2 },
    { camera: CAMERA, zone: 'entrance', kind: 'count', time: ten + HOUR, intervalMs: HOUR / 2, value: 4 },
  ]);
});
afterAll(async () => {
  await t?.stop();
});

const admin = () => ({ Authorization: `Bearer ${t.adminKey}` });
const json = (body: unknown, headers: Record<string, string> = admin()) => ({
  method: 'PUT',
  headers: { ...headers, 'Content-Type': 'application/json' },
  body: typeof body === 'string' ? body : JSON.stringify(body),
});
async function live(): Promise<{ cameras: { camera: string; status: string; zones: { id: string; level: string; shown: number; count: number }[] }[] }> {
  const res = await fetch(`${t.base}/api/live`);
  expect(res.status).toBe(200);
  return jsonOf(res);
}

describe('reading', () => {
  it('GET /api/health says ok with each camera', async () => {
    const res = await fetch(`${t.base}/api/health`);
    expect(res.status).toBe(200);
    const body = await jsonOf(res);
    expect(body).toMatchObject({ ok: true, site: 'Residuum dashboard test', timeZone: TEST_TIME_ZONE });
    expect(body.cameras.map((c: { camera: string }) => c.camera)).toEqual([CAMERA]);
  });

  it('GET /api/live gives statuses and levels that agree with the counts', async () => {
    let state = await live();
    // The camera counts once its first frame arrived.
    for (let i = 0; i < 100 && state.cameras[0].status !== 'counting'; i++) {
      await new Promise((r) => setTimeout(r, 100));
      state = await live();
    }
    const camera = state.cameras[0];
    expect(camera.status).toBe('counting');
    expect(camera.zones.map((z) => z.id)).toEqual(['entrance', 'stacks', 'tables']);
    for (const z of camera.zones as unknown as { shown: number; count: number; capacity: number; level: string }[]) {
      expect(z.shown).toBe(Math.round(z.count));
      // near from 80 % of the capacity (inclusive), over above it
      const expected = z.shown > z.capacity ? 'over' : z.shown >= 0.8 * z.capacity ? 'near' : 'below';
      expect(z.level).toBe(expected);
    }
  });

  it('GET /api/live/stream delivers the state and then an update', async () => {
    const controller = new AbortController();
    const res = await fetch(`${t.base}/api/live/stream`, { signal: controller.signal });
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/^text\/event-stream/);
    const [first, second] = (await readEvents(res.body!, 2)) as { time: number; cameras: { camera: string; lastFrameAt: number }[] }[];
    controller.abort();
    expect(first.cameras[0].camera).toBe(CAMERA);
    // The scene plays at 10× speed, so the next event carries a later frame.
    expect(second.time).toBeGreaterThan(first.time);
    expect(second.cameras[0].lastFrameAt).toBeGreaterThan(first.cameras[0].lastFrameAt);
  });

  it('GET /api/history returns the hourly rows, worked by hand', async () => {
    const res = await fetch(`${t.base}/api/history?camera=${CAMERA}&zone=entrance&from=${day}&to=${day}`);
    expect(res.status).toBe(200);
    const body = await jsonOf(res);
    expect(body.timeZone).toBe(TEST_TIME_ZONE);
    expect(body.start).toBe(DateTime.fromISO(day, { zone: TEST_TIME_ZONE }).toMillis());
    // check: luxon (IANA tz) for the local hour; mean (2·30 + 4·30) / 60 = 3 worked by hand
    const tenIso = DateTime.fromISO(`${day}T10:00`, { zone: TEST_TIME_ZONE }).toISO({ suppressMilliseconds: true });
    const withData = body.rows.filter((r: { coverage: number }) => r.coverage > 0);
    expect(withData).toHaveLength(1);
    expect(withData[0]).toMatchObject({ hourStartIso: tenIso, camera: CAMERA, zone: 'entrance', mean: 3, max: 4, min: 2, coverage: 1, samples: 2, occupiedShare: 1 });
  });

  it('GET /api/history names a bad parameter', async () => {
    const missing = await fetch(`${t.base}/api/history?from=${day}`);
    expect(missing.status).toBe(400);
    expect((await jsonOf(missing)).error).toMatch(/\bto\b/);
    const bad = await fetch(`${t.base}/api/history?from=yesterday&to=${day}`);
    expect(bad.status).toBe(400);
    expect((await jsonOf(bad)).error).toMatch(/^from:/);
    const zone = await fetch(`${t.base}/api/history?from=${day}&to=${day}&zone=no-such-zone`);
    expect(zone.status).toBe(400);
    expect((await jsonOf(zone)).error).toMatch(/^zone:/);
  });

  it('GET /api/export/hourly.csv is RFC 4180 CSV with the hand-worked row', async () => {
    const res = await fetch(`${t.base}/api/export/hourly.csv?from=${day}&to=${day}`);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/^text\/csv/);
    expect(res.headers.get('content-disposition')).toMatch(/^attachment; filename="?residuum-hourly-/);
    const text = await res.text();
    // check: RFC 4180; csv-parse as an independent parser
    const records = parse(text, { record_delimiter: '\r\n' }) as string[][];
    expect(records[0]).toEqual(['hour_start', 'camera', 'zone', 'mean', 'max', 'min', 'occupied_share', 'coverage', 'samples']);
    const tenIso = DateTime.fromISO(`${day}T10:00`, { zone: TEST_TIME_ZONE }).toISO({ suppressMilliseconds: true });
    expect(records).toContainEqual([tenIso, CAMERA, 'entrance', '3', '4', '2', '1', '1', '2']);
    expect(records).toHaveLength(2);
  });

  it('GET /api/capacity suggests from the occupant-load table and names bad fields', async () => {
    const ok = await jsonOf(await fetch(`${t.base}/api/capacity?use=library-reading&area=1000&unit=ft2`));
    // check: IBC 2021 Table 1004.5, library reading rooms 50 ft² net per occupant (recalled from memory)
    expect(ok).toMatchObject({ occupants: 20, factorFt2: 50, basis: 'net' });
    expect(ok.caution).toMatch(/authority having jurisdiction/);
    const list = await jsonOf(await fetch(`${t.base}/api/capacity`));
    expect(list.uses.length).toBeGreaterThan(5);
    for (const [q, field] of [['use=ballroom&area=10&unit=m2', 'use'], ['use=business&area=-3&unit=m2', 'area'], ['use=business&area=10', 'unit']]) {
      const res = await fetch(`${t.base}/api/capacity?${q}`);
      expect(res.status).toBe(400);
      expect((await jsonOf(res)).error).toContain(`query parameter ${field}`);
    }
  });

  it('GET /api/site tells the retention for the privacy notice', async () => {
    expect(await jsonOf(await fetch(`${t.base}/api/site`))).toMatchObject({ site: 'Residuum dashboard test', sampleRetentionDays: 30, viewTokenRequired: false, editing: true });
  });

  it('an unknown API route is a JSON 404', async () => {
    const res = await fetch(`${t.base}/api/nothing`);
    expect(res.status).toBe(404);
    expect(await jsonOf(res)).toEqual({ error: 'no such API route' });
  });
});

describe('security headers and limits', () => {
  it('serves the dashboard with a strict Content-Security-Policy', async () => {
    const res = await fetch(`${t.base}/`);
    expect(res.status).toBe(200);
    const csp = res.headers.get('content-security-policy') ?? '';
    expect(csp).toContain("script-src 'self'");
    expect(csp).toContain("style-src 'self'");
    expect(csp).toContain("frame-ancestors 'none'");
    expect(csp).toContain("object-src 'none'");
    expect(csp).not.toContain('unsafe-inline');
    expect(csp).not.toContain('unsafe-eval');
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
    expect(res.headers.get('x-powered-by')).toBeNull();
    expect(await res.text()).toContain('<script type="module" src="/js/app.js"></script>');
  });

  it('has no inline script, style attribute or event handler in its pages (the CSP would block them)', () => {
    for (const page of ['web/index.html', 'web/privacy.html']) {
      const html = readFileSync(page, 'utf8');
      for (const tag of html.match(/<script\b[^>]*>/g) ?? []) expect(tag, page).toMatch(/\bsrc="/);
      expect(html, page).not.toMatch(/<script\b[^>]*>[^<\s]/);
      expect(html, page).not.toMatch(/\sstyle\s*=/i);
      expect(html, page).not.toMatch(/\son[a-z]+\s*=/i);
      expect(html, page).not.toMatch(/<style\b/i);
    }
  });

  it('serves uPlot from node_modules, not a CDN', async () => {
    const res = await fetch(`${t.base}/vendor/uplot/uPlot.esm.js`);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/javascript/);
    expect(readFileSync('web/index.html', 'utf8')).not.toMatch(/https?:\/\//);
  });

  it('refuses a body over 256 kB with 413 and bad JSON with 400', async () => {
    const big = { zones: [{ id: 'big', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1]], name: 'x'.repeat(300_000) }] };
    const res = await fetch(`${t.base}/api/cameras/${CAMERA}/zones`, json(big));
    expect(res.status).toBe(413);
    expect((await jsonOf(res)).error).toMatch(/larger than 256 kB/);
    const bad = await fetch(`${t.base}/api/cameras/${CAMERA}/zones`, json('{"zones": ['));
    expect(bad.status).toBe(400);
    expect((await jsonOf(bad)).error).toMatch(/not valid JSON/);
  });

  it('answers only loopback Host names when bound to 127.0.0.1 (DNS rebinding)', async () => {
    const port = new URL(t.base).port;
    const status = (host: string) =>
      new Promise<number>((done, fail) => {
        const req = request({ host: '127.0.0.1', port, path: '/api/health', headers: { Host: host } }, (res) => {
          res.resume();
          done(res.statusCode ?? 0);
        });
        req.once('error', fail);
        req.end();
      });
    expect(await status('evil.example:80')).toBe(421);
    expect(await status(`localhost:${port}`)).toBe(200);
    expect(await status(`127.0.0.1:${port}`)).toBe(200);
  });
});

describe('authentication', () => {
  const changes: [string, string, unknown][] = [
    ['PUT', `/api/cameras/${CAMERA}/zones`, { zones: [] }],
    ['POST', `/api/cameras/${CAMERA}/learn`, { seconds: 5 }],
    ['PUT', '/api/settings', { nearCapacity: 0.9 }],
    ['GET', `/api/cameras/${CAMERA}/background.png`, undefined],
    ['GET', `/api/cameras/${CAMERA}/mask`, undefined],
    ['GET', `/api/cameras/${CAMERA}/models`, undefined],
    ['POST', `/api/cameras/${CAMERA}/models/1/activate`, undefined],
  ];

  it('refuses every change, the background and the mask without a key (401)', async () => {
    for (const [method, path, body] of changes) {
      const res = await fetch(`${t.base}${path}`, { method, ...(body !== undefined && { headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(body) }) });
      expect(res.status, `${method} ${path}`).toBe(401);
      expect(res.headers.get('www-authenticate')).toMatch(/^Bearer/);
      expect((await jsonOf(res)).error).toMatch(/admin key/);
    }
  });

  it('refuses a wrong key (401) and a malformed header (401), without changing anything', async () => {
    const before = await jsonOf(await fetch(`${t.base}/api/cameras/${CAMERA}/zones`));
    const wrong = await fetch(`${t.base}/api/cameras/${CAMERA}/zones`, json({ zones: before.zones.slice(0, 1) }, { Authorization: `Bearer ${'A'.repeat(43)}` }));
    expect(wrong.status).toBe(401);
    const basic = await fetch(`${t.base}/api/cameras/${CAMERA}/zones`, json({ zones: before.zones.slice(0, 1) }, { Authorization: 'Basic YWRtaW46YWRtaW4=' }));
    expect(basic.status).toBe(401);
    expect(await jsonOf(await fetch(`${t.base}/api/cameras/${CAMERA}/zones`))).toEqual(before);
  });

  it('compares a presented key in constant time: crypto.timingSafeEqual on SHA-256 digests', async () => {
    const spy = vi.spyOn(crypto, 'timingSafeEqual');
    try {
      const res = await fetch(`${t.base}/api/auth`, { headers: { Authorization: 'Bearer short' } });
      expect(res.status).toBe(401);
      expect(spy).toHaveBeenCalled();
      for (const [a, b] of spy.mock.calls) expect([(a as Buffer).length, (b as Buffer).length]).toEqual([32, 32]);
    } finally {
      spy.mockRestore();
    }
  });

  it('GET /api/auth tells the role of a key', async () => {
    expect(await jsonOf(await fetch(`${t.base}/api/auth`))).toMatchObject({ role: 'none' });
    expect(await jsonOf(await fetch(`${t.base}/api/auth`, { headers: admin() }))).toMatchObject({ role: 'admin' });
  });

  it('limits failed keys per address: 10 per minute, then 429 even for the right key', async () => {
    // A second app over the same service, with its own limiter, so the service's stays usable.
    const app = createApp({ store: t.service.store, control: t.service.control, live: () => t.service.control.cameras(), siteName: 'x', timeZone: TEST_TIME_ZONE, startedAt: Date.now() });
    const server = app.listen(0, '127.0.0.1');
    await new Promise((r) => server.once('listening', r));
    const base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
    try {
      const attempt = (key: string) => fetch(`${base}/api/auth`, { headers: { Authorization: `Bearer ${key}` } });
      for (let i = 0; i < 10; i++) expect((await attempt(`wrong${i}`)).status).toBe(401);
      const blocked = await attempt('wrong-again');
      expect(blocked.status).toBe(429);
      expect(Number(blocked.headers.get('retry-after'))).toBeGreaterThan(0);
      expect((await attempt(t.adminKey)).status).toBe(429);
    } finally {
      server.closeAllConnections();
      await new Promise((r) => server.close(r));
    }
  });

  it('lets an address try again once its failures leave the window', async () => {
    let now = 1_000_000;
    const limiter = failureLimiter({ maxFailures: 2, windowMs: 60_000, now: () => now });
    const app = createApp({ store: t.service.store, live: () => [], siteName: 'x', timeZone: TEST_TIME_ZONE, startedAt: 0, limiter });
    const server = app.listen(0, '127.0.0.1');
    await new Promise((r) => server.once('listening', r));
    const base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
    try {
      const attempt = (key: string) => fetch(`${base}/api/auth`, { headers: { Authorization: `Bearer ${key}` } });
      expect((await attempt('a')).status).toBe(401);
      expect((await attempt('b')).status).toBe(401);
      expect((await attempt(t.adminKey)).status).toBe(429);
      now += 60_000;
      expect((await attempt(t.adminKey)).status).toBe(200);
    } finally {
      server.closeAllConnections();
      await new Promise((r) => server.close(r));
    }
  });
});

describe('zones', () => {
  const url = () => `${t.base}/api/cameras/${CAMERA}/zones`;

  it('PUT replaces the zones, applies them at once and logs the change', async () => {
    const { zones } = await jsonOf(await fetch(url()));
    const added = { id: 'api-test', name: 'API test', kind: 'room', capacity: 3, polygon: [[0.1, 0.1], [0.4, 0.1], [0.4, 0.3], [0.1, 0.3]] };
    const res = await fetch(url(), json({ zones: [...zones, added] }));
    expect(res.status).toBe(200);
    expect((await jsonOf(res)).zones.map((z: { id: string }) => z.id)).toEqual(['entrance', 'stacks', 'tables', 'api-test']);
    // applied at once: the live state counts the new zone
    expect((await live()).cameras[0].zones.map((z) => z.id)).toContain('api-test');
    // persisted with history: the store has it, and the history shows its creation
    expect(t.service.store.getZone(CAMERA, 'api-test')?.zone).toMatchObject(added);
    const history = (await jsonOf(await fetch(`${url()}/history`))).history;
    expect(history).toContainEqual(expect.objectContaining({ zone: 'api-test', field: '*', old: null }));

    const moved = { ...added, capacity: 5 };
    expect((await fetch(url(), json({ zones: [...zones, moved] }))).status).toBe(200);
    const again = (await jsonOf(await fetch(`${url()}/history`))).history;
    expect(again).toContainEqual(expect.objectContaining({ zone: 'api-test', field: 'capacity', old: 3, new: 5 }));
    // remove it again
    expect((await fetch(url(), json({ zones }))).status).toBe(200);
    expect((await live()).cameras[0].zones.map((z) => z.id)).toEqual(['entrance', 'stacks', 'tables']);
  });

  it('PUT with an invalid zone is a 400 naming the field, and changes nothing', async () => {
    const { zones } = await jsonOf(await fetch(url()));
    const square = [[0.1, 0.1], [0.4, 0.1], [0.4, 0.3], [0.1, 0.3]];
    const cases: [unknown, RegExp][] = [
      [{ zones: [{ id: 'a', kind: 'room', polygon: [[0.1, 0.1], [0.2, 0.2]] }] }, /zones\[0\]\.polygon needs at least 3 points/],
      [{ zones: [{ id: 'a', kind: 'room', polygon: [[0, 0], [1, 1], [1, 0], [0, 1]] }] }, /zones\[0\]\.polygon is self-intersecting/],
      [{ zones: [{ id: 'a', kind: 'room', polygon: [[0.1, 0.1], [1.2, 0.1], [0.5, 0.5]] }] }, /zones\[0\]\.polygon\[1\]\[0\] must be a number in 0\.\.1/],
      [{ zones: [{ id: 'a', kind: 'room', polygon: square, capacity: -1 }] }, /zones\[0\]\.capacity must be a whole number/],
      [{ zones: [{ id: 'a', kind: 'room', polygon: square, personArea: 2 }] }, /zones\[0\]\.personArea must be a fraction/],
      [{ zones: [{ id: 'a', kind: 'room', polygon: square, threshold: 0 }] }, /zones\[0\]\.threshold must be/],
      [{ zones: [{ id: 'a b', kind: 'room', polygon: square }] }, /zones\[0\]\.id must be/],
      [{ zones: [{ id: 'a', kind: 'room', polygon: square, colour: 'red' }] }, /zones\[0\]\.colour is not a zone field/],
      [{ zones: [] }, /zones is empty/],
      [{ zonez: [] }, /zonez is not expected/],
      [{ zones: [{ ...zones[0], kind: 'shelf' }] }, /kind/],
    ];
    for (const [body, message] of cases) {
      const res = await fetch(url(), json(body));
      expect(res.status, JSON.stringify(body)).toBe(400);
      expect((await jsonOf(res)).error).toMatch(message);
    }
    expect((await jsonOf(await fetch(url()))).zones).toEqual(zones);
    expect((await fetch(`${t.base}/api/cameras/nowhere/zones`, json({ zones }))).status).toBe(404);
  });
});

describe('empty scene, mask and settings', () => {
  it('GET background.png is the model mean as a PNG made in memory', async () => {
    const res = await fetch(`${t.base}/api/cameras/${CAMERA}/background.png`, { headers: admin() });
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toBe('image/png');
    expect(res.headers.get('cache-control')).toBe('no-store');
    const png = Buffer.from(await res.arrayBuffer());
    // check: PNG signature (ISO/IEC 15948 §5.2); sharp decodes it back to the same grey levels
    expect(png.subarray(0, 8)).toEqual(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]));
    // colour type 0 = greyscale, bit depth 8 (IHDR, ISO/IEC 15948 §11.2.2)
    expect([png[24], png[25]]).toEqual([8, 0]);
    const { data, info } = await sharp(png).toColourspace('b-w').raw().toBuffer({ resolveWithObject: true });
    expect([info.width, info.height, info.channels]).toEqual([160, 120, 1]);
    expect(Buffer.from(data).equals(Buffer.from(t.service.control.background(CAMERA)!.data))).toBe(true);
  });

  it('GET mask gives the coarse foreground of the last frame, JSON or PNG', async () => {
    const res = await fetch(`${t.base}/api/cameras/${CAMERA}/mask?format=json&cell=10`, { headers: admin() });
    expect(res.status).toBe(200);
    const mask = await jsonOf(res);
    expect(mask).toMatchObject({ camera: CAMERA, cell: 10, width: 16, height: 12 });
    expect(mask.rows).toHaveLength(12);
    for (const row of mask.rows) expect(row).toMatch(/^[01]{16}$/);
    const png = await fetch(`${t.base}/api/cameras/${CAMERA}/mask?format=png&cell=8`, { headers: admin() });
    expect(png.headers.get('content-type')).toBe('image/png');
    const meta = await sharp(Buffer.from(await png.arrayBuffer())).metadata();
    expect([meta.width, meta.height]).toEqual([20, 15]);
    const bad = await fetch(`${t.base}/api/cameras/${CAMERA}/mask?cell=1`, { headers: admin() });
    expect(bad.status).toBe(400);
    expect((await jsonOf(bad)).error).toMatch(/cell/);
  });

  it('PUT /api/settings changes the near mark and shelf marks, naming bad fields', async () => {
    const bad = await fetch(`${t.base}/api/settings`, json({ nearCapacity: 1.5 }));
    expect(bad.status).toBe(400);
    expect((await jsonOf(bad)).error).toMatch(/nearCapacity must be a number from 0\.1 to 1, got 1\.5/);
    const badZone = await fetch(`${t.base}/api/settings`, json({ lowStock: { 'reading-room/tables': 'lots' } }));
    expect((await jsonOf(badZone)).error).toMatch(/lowStock\["reading-room\/tables"\]/);
    const ok = await fetch(`${t.base}/api/settings`, json({ nearCapacity: 0.5, lowStock: { 'stock-room/shelf-top': 0.3 } }));
    expect(ok.status).toBe(200);
    expect(await jsonOf(await fetch(`${t.base}/api/settings`))).toEqual({ nearCapacity: 0.5, defaultLowStock: 0.15, lowStock: { 'stock-room/shelf-top': 0.3 } });
    expect((await live() as unknown as { nearCapacity: number }).nearCapacity).toBe(0.5);
    await fetch(`${t.base}/api/settings`, json({ nearCapacity: 0.8, lowStock: { 'stock-room/shelf-top': null } }));
  });

  it('POST learn validates seconds, then learns from the live source with progress', async () => {
    const url = `${t.base}/api/cameras/${CAMERA}/learn`;
    const before = await jsonOf(await fetch(url));
    expect(before.model).toMatchObject({ width: 160, height: 120, frames: 200 });
    expect(['good', 'fair', 'poor']).toContain(before.model.verdict.level);
    for (const seconds of ['5', 0, 4000, null]) {
      const res = await fetch(url, { ...json({ seconds }), method: 'POST' });
      expect(res.status).toBe(400);
      expect((await jsonOf(res)).error).toMatch(/seconds must be a number from 1 to 3600/);
    }
    const res = await fetch(url, { ...json({ seconds: 1 }), method: 'POST' });
    expect(res.status).toBe(202);
    expect((await jsonOf(res)).status).toMatchObject({ state: 'learning', seconds: 1 });
    let status = (await jsonOf(await fetch(url))).status;
    for (let i = 0; i < 300 && status.state === 'learning'; i++) {
      await new Promise((r) => setTimeout(r, 100));
      status = (await jsonOf(await fetch(url))).status;
    }
    expect(status).toMatchObject({ state: 'done', progress: 1 });
    const after = await jsonOf(await fetch(url));
    expect(after.model.frames).toBe(status.frames);
  });
});
