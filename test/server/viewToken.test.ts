import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { validateConfig } from '../../src/config/loadConfig.ts';
import { createApp } from '../../src/server/createApp.ts';
import { prepareTokens, type NewTokens } from '../../src/server/tokens.ts';
import { tempStore, type TempStore } from '../store/tempStore.ts';
import { jsonOf } from './testService.ts';

// With server.viewToken: true, reading counts needs the view key (or the admin key).
let t: TempStore;
let server: Server;
let base: string;
let keys: NewTokens;

beforeAll(async () => {
  t = tempStore({ timeZone: 'Europe/Berlin' });
  keys = prepareTokens(t.store, { viewToken: true });
  t.store.upsertCamera({ id: 'reading-room', name: 'Reading room' });
  const app = createApp({ store: t.store, live: () => [], siteName: 'Closed site', timeZone: 'Europe/Berlin', startedAt: 0, viewTokenRequired: true, host: '127.0.0.1' });
  server = app.listen(0, '127.0.0.1');
  await new Promise((r) => server.once('listening', r));
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});
afterAll(async () => {
  server.closeAllConnections();
  await new Promise((r) => server.close(r));
  t.cleanup();
});

const get = (path: string, key?: string) => fetch(`${base}${path}`, key ? { headers: { Authorization: `Bearer ${key}` } } : {});

describe('server.viewToken', () => {
  it('is read from the configuration (default false) and checked', () => {
    const camera = { id: 'c', source: { kind: 'synthetic', scene: 'reading-room' } };
    expect(validateConfig({ cameras: [camera] }).server.viewToken).toBe(false);
    expect(validateConfig({ server: { viewToken: true }, cameras: [camera] }).server.viewToken).toBe(true);
    expect(() => validateConfig({ server: { viewToken: 'yes' }, cameras: [camera] }, 'site.yaml')).toThrow(/site\.yaml: server\.viewToken must be true or false/);
  });

  it('refuses counts without a key and serves them with the view or admin key', async () => {
    for (const path of ['/api/live', '/api/history?from=2026-01-01&to=2026-01-01', '/api/export/hourly.csv?from=2026-01-01&to=2026-01-01', '/api/settings', '/api/today', '/api/cameras/reading-room/events']) {
      expect((await get(path)).status, path).toBe(401);
      expect((await get(path, keys.view)).status, path).toBe(200);
      expect((await get(path, keys.admin)).status, path).toBe(200);
    }
  });

  it('keeps the health check and the site facts open', async () => {
    expect((await get('/api/health')).status).toBe(200);
    expect(await jsonOf(await get('/api/site'))).toMatchObject({ viewTokenRequired: true, editing: false });
  });

  it('gives the view key no right to change anything (403)', async () => {
    const res = await fetch(`${base}/api/settings`, { method: 'PUT', headers: { Authorization: `Bearer ${keys.view}`, 'Content-Type': 'application/json' }, body: '{"nearCapacity":0.9}' });
    expect(res.status).toBe(403);
    expect(await jsonOf(await get('/api/auth', keys.view))).toMatchObject({ role: 'viewer' });
  });

  it('answers 503 for editing routes when no service runs behind the app', async () => {
    const res = await get('/api/cameras', keys.admin);
    expect(res.status).toBe(503);
  });
});
