import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parse } from 'csv-parse/sync';
import { hourlyRows, writeHourlyCsv } from '../../src/outputs/hourlyCsv.ts';
import { jsonOf, READING_ROOM_ZONES, startTestService, type TestService } from './testService.ts';

let t: TestService;
beforeAll(async () => {
  t = await startTestService();
}, 120_000);
afterAll(async () => {
  await t?.stop();
});

const CAMERA = 'reading-room';
const put = (body: string, key = t.adminKey) =>
  fetch(`${t.base}/api/cameras/${CAMERA}/zones`, { method: 'PUT', headers: { Authorization: `Bearer ${key}`, 'Content-Type': 'application/json' }, body });

describe('hostile requests', () => {
  it('stores SQL-looking and formula-looking zone names as plain text, and the database stays intact', async () => {
    const names = ["x'); DROP TABLE samples; --", '=HYPERLINK("http://example.invalid","x")', '+1+1', '-2', '@SUM(A1)', 'Robert"); DELETE FROM zones;--'];
    const zones = [...READING_ROOM_ZONES.map((z, i) => ({ ...z, name: names[i] })), { id: 'extra', name: names[3], kind: 'room', polygon: [[0, 0], [0.1, 0], [0.1, 0.1]] }];
    const res = await put(JSON.stringify({ zones }));
    expect(res.status).toBe(200);
    expect(t.service.store.getZone(CAMERA, 'entrance')?.zone.name).toBe(names[0]);
    expect(t.service.store.db.pragma('integrity_check', { simple: true })).toBe('ok');
    expect(t.service.store.db.prepare("select count(*) as n from sqlite_master where name = 'samples'").get()).toEqual({ n: 1 });
    // check: OWASP "CSV Injection" guidance (recalled from memory): a field starting with = + - @
    // is prefixed with ' so that spreadsheets show it as text.
    const today = new Date().toISOString().slice(0, 10);
    const csv = writeHourlyCsv(hourlyRows(t.service.store, { from: today, to: today, timeZone: 'UTC' }), { label: 'name' });
    const rows = parse(csv, { columns: true }) as Record<string, string>[];
    for (const row of rows) expect(row.zone).not.toMatch(/^[=+\-@]/);
    expect(rows.some((r) => r.zone === `'${names[1]}`)).toBe(true);
  });

  it.each([
    ['path traversal', '/api/export/hourly.csv?from=../../etc/passwd&to=2026-12-01'],
    ['an id with a slash', '/api/export/hourly.csv?from=2026-12-01&to=2026-12-01&camera=../../x'],
    ['SQL in a query', "/api/history?camera=reading-room&zone=x' OR '1'='1&from=2026-12-01&to=2026-12-01"],
    ['a repeated parameter', '/api/export/hourly.csv?from=2026-12-01&from=2026-12-02&to=2026-12-02'],
  ])('answers %s with a 400 that says what is wrong', async (_what, path) => {
    const res = await fetch(`${t.base}${path}`);
    expect(res.status).toBe(400);
    expect((await jsonOf(res)).error).toMatch(/\w/);
  });

  it.each([
    ['malformed JSON', '{"zones": [', 400],
    ['a wrong type', '{"zones": "all of them"}', 400],
    ['an oversized body', JSON.stringify({ zones: [], padding: 'x'.repeat(400_000) }), 413],
  ])('refuses %s without changing the zones', async (_what, body, status) => {
    const before = t.service.store.listZones({ camera: CAMERA }).length;
    const res = await put(body as string);
    expect(res.status).toBe(status);
    expect((await jsonOf(res)).error).toMatch(/\w/);
    expect(t.service.store.listZones({ camera: CAMERA }).length).toBe(before);
  });

  it.each([
    ['zones', `/api/cameras/${CAMERA}/zones`, 'PUT', (deep: string) => `{"zones": [{"id": ${deep}}]}`],
    ['settings', '/api/settings', 'PUT', (deep: string) => `{"nearCapacity": ${deep}}`],
    ['learn', `/api/cameras/${CAMERA}/learn`, 'POST', (deep: string) => `{"seconds": ${deep}}`],
  ])('answers JSON nested 20 000 deep (%s) with a 400 naming the limit, not a stack overflow', async (_what, path, method, body) => {
    const deep = '['.repeat(20_000) + ']'.repeat(20_000);
    const res = await fetch(`${t.base}${path}`, { method, headers: { Authorization: `Bearer ${t.adminKey}`, 'Content-Type': 'application/json' }, body: body(deep) });
    expect(res.status).toBe(400);
    expect((await jsonOf(res)).error).toBe('request body is nested too deeply (more than 32 levels of objects and lists)');
  });

  it('takes the auth scheme in any case (check: RFC 7235 §2.1, "the scheme is case-insensitive", recalled from memory)', async () => {
    for (const scheme of ['bearer', 'BEARER', 'BeArEr']) {
      const res = await fetch(`${t.base}/api/auth`, { headers: { Authorization: `${scheme} ${t.adminKey}` } });
      expect(res.status, scheme).toBe(200);
      expect((await jsonOf(res)).role, scheme).toBe('admin');
    }
  });
});
