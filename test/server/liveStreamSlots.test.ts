import { request, type IncomingMessage } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { Server } from 'node:http';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../src/server/createApp.ts';
import { prepareTokens } from '../../src/server/tokens.ts';
import { tempStore, type TempStore } from '../store/tempStore.ts';

// Live-stream slots (issue: one client without a key could take every Server-Sent Events slot,
// and the dashboard then got 503 "internal error"). Clients come from different loopback source
// addresses (127.0.0.0/8 is all loopback on Linux: check: RFC 1122 §3.2.1.3, recalled from memory).
let t: TempStore;
let server: Server;
let port: number;
let adminKey: string;
const open: IncomingMessage[] = [];

beforeAll(async () => {
  t = tempStore();
  adminKey = prepareTokens(t.store).admin!;
  const app = createApp({
    store: t.store,
    live: () => [],
    siteName: 'slots',
    timeZone: 'UTC',
    startedAt: Date.now(),
    stream: { intervalMs: 50, maxClients: 8, reservedForKeys: 2, maxPerAddress: 2 },
  });
  server = await new Promise<Server>((done) => {
    const s = app.listen(0, '0.0.0.0', () => done(s));
  });
  port = (server.address() as AddressInfo).port;
});
afterAll(async () => {
  for (const r of open) r.destroy();
  server.closeAllConnections();
  await new Promise((done) => server.close(done));
  t.cleanup();
});

/** Opens the stream from `from`; resolves with the status and, for a refusal, the JSON body. */
function stream(from: string, key?: string): Promise<{ status: number; body?: { error: string }; retryAfter?: string; first?: string }> {
  return new Promise((done, fail) => {
    const req = request({ host: '127.0.0.1', port, path: '/api/live/stream', localAddress: from, headers: key ? { Authorization: `Bearer ${key}` } : {} }, (res) => {
      let text = '';
      res.setEncoding('utf8');
      if (res.statusCode === 200) {
        open.push(res);
        res.on('data', (chunk: string) => {
          text += chunk;
          if (text.includes('event: live')) done({ status: 200, first: text });
        });
        return;
      }
      res.on('data', (chunk: string) => (text += chunk));
      res.on('end', () => done({ status: res.statusCode!, body: JSON.parse(text), retryAfter: res.headers['retry-after'] as string }));
    });
    req.on('error', fail);
    req.end();
  });
}

describe('live stream slots', () => {
  it('caps streams per address (429), keeps slots for a key (503 for the rest), and says why in JSON', async () => {
    expect((await stream('127.0.0.1')).status).toBe(200);
    expect((await stream('127.0.0.1')).status).toBe(200);
    const perAddress = await stream('127.0.0.1');
    expect(perAddress.status).toBe(429);
    expect(perAddress.body!.error).toMatch(/too many live streams from this address \(at most 2 without a key\)/);
    expect(perAddress.retryAfter).toBe('10');

    // Fill the 6 slots for clients without a key from other addresses.
    for (const from of ['127.0.0.2', '127.0.0.2', '127.0.0.3', '127.0.0.3']) expect((await stream(from)).status).toBe(200);
    const full = await stream('127.0.0.4');
    expect(full.status).toBe(503);
    expect(full.body!.error).toMatch(/all 6 live stream slots for clients without a key are in use; poll GET \/api\/live/);
    expect(full.body!.error).not.toMatch(/internal error/);

    // The dashboard with a key still streams, from an address that already holds its share too.
    const keyed = await stream('127.0.0.1', adminKey);
    expect(keyed.status).toBe(200);
    expect(keyed.first).toContain('event: live');
    expect((await stream('127.0.0.5', adminKey)).status).toBe(200);
    const allFull = await stream('127.0.0.5', adminKey);
    expect(allFull.status).toBe(503);
    expect(allFull.body!.error).toMatch(/all 8 live stream slots are in use/);

    // A slot closed is a slot free again.
    open.shift()!.destroy();
    await new Promise((done) => setTimeout(done, 100));
    expect((await stream('127.0.0.1')).status).toBe(200);
  }, 30_000);
});
