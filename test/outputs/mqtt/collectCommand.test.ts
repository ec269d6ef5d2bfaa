import { chmodSync, existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { collectCommand } from '../../../src/commands/collect.ts';
import { createMqttPublisher } from '../../../src/outputs/mqtt/mqttPublisher.ts';
import { validateMqttSettings } from '../../../src/outputs/mqtt/mqttSettings.ts';
import { openStore } from '../../../src/store/index.ts';
import { waitUntil } from '../../service/waitUntil.ts';
import { logRecords } from '../../service/logRecords.ts';
import { startBroker, type TestBroker } from './broker.ts';
import { dayCsv, FAST, inventedBatches, sourceStore, TIME_ZONE, ZONES } from './fixtures.ts';
import { reportingStore } from '../../../src/store/reportingStore.ts';
import { pgAvailable, testDatabase } from '../../store/postgres/pgTestDatabase.ts';

let broker: TestBroker | undefined;
let dir: string | undefined;
afterEach(async () => {
  await broker?.close();
  if (dir) rmSync(dir, { recursive: true, force: true });
  broker = undefined;
  dir = undefined;
});

describe('residuum collect', () => {
  it('refuses an admin key file that others may read, before the database is opened', async () => {
    dir = mkdtempSync(join(tmpdir(), 'residuum-collect-'));
    const config = join(dir, 'collect.yaml');
    writeFileSync(config, 'site: { name: Head office, timeZone: Europe/Berlin }\nserver: { host: 127.0.0.1, port: 0 }\nmqtt: { url: "mqtt://127.0.0.1:1" }\n');
    const keyFile = join(dir, 'admin-key');
    writeFileSync(keyFile, 'ab'.repeat(32));
    chmodSync(keyFile, 0o644); // whatever the umask
    await expect(collectCommand(['--config', config, '--data', join(dir, 'data')], { env: { RESIDUUM_ADMIN_KEY_FILE: keyFile }, log: () => {} })).rejects.toThrow(
      /RESIDUUM_ADMIN_KEY_FILE .*admin-key may be read by every user of this machine/,
    );
    expect(existsSync(join(dir, 'data', 'residuum.db'))).toBe(false);
  });

  it('collects published samples into <data>/residuum.db and serves the collected cameras', async () => {
    broker = await startBroker();
    dir = mkdtempSync(join(tmpdir(), 'residuum-collect-'));
    const config = join(dir, 'collect.yaml');
    writeFileSync(config, `site: { name: Head office, timeZone: Europe/Berlin }\nserver: { host: 127.0.0.1, port: 0 }\nmqtt: { url: "${broker.url}", clientId: collect-test }\n`);
    const lines: string[] = [];
    let notice = '';
    let stop!: () => void;
    const until = new Promise<void>((done) => (stop = done));
    const exit = collectCommand(['--config', config, '--data', join(dir, 'data')], { until, log: (l) => lines.push(l), out: { write: (t: string) => (notice += t), isTTY: true } });
    const url = await waitUntil(() => lines.map((l) => /dashboard at (http:\/\/\S+)/.exec(l)?.[1]).find(Boolean), { what: 'the dashboard line', timeoutMs: 30_000, intervalMs: 20 });
    await waitUntil(() => lines.some((l) => l.startsWith('mqtt: connected')), { what: 'the collector to connect', timeoutMs: 30_000, intervalMs: 20 });
    expect(notice).toMatch(/Admin key \(shown only now/);

    const publisher = createMqttPublisher(validateMqttSettings({ url: broker.url, stateIntervalSeconds: 0 }), { site: 'riverside', backoff: FAST });
    await waitUntil(() => publisher.stats().connected, { what: 'the publisher to connect', timeoutMs: 30_000, intervalMs: 20 });
    const time = Date.UTC(2026, 2, 2, 9, 0);
    // Retained, so it reaches the collector even if its subscription is not in place yet.
    publisher.publishLive({ camera: 'door', name: 'Front door', state: 'online', viewChanged: false, zones: [{ id: 'entrance', name: 'Entrance', kind: 'room', count: 2, fill: 0.02 }] });
    const health = await waitUntil(
      async () => {
        const body = (await (await fetch(`${url}api/health`)).json()) as { cameras: { camera: string; state: string }[] };
        return body.cameras.length > 0 ? body : undefined;
      },
      { what: 'the collected camera in /api/health', timeoutMs: 30_000, intervalMs: 50 },
    );
    expect(health.cameras).toEqual([expect.objectContaining({ camera: 'riverside--door', state: 'online' })]);
    publisher.publishSample({ time, camera: 'door', zone: 'entrance', kind: 'count', value: 2, intervalMs: 10_000 });
    const reader = openStore(join(dir, 'data', 'residuum.db'));
    try {
      await waitUntil(() => reader.listSamples({ camera: 'riverside--door', zone: 'entrance' }).length === 1, { what: 'the sample in the database', timeoutMs: 30_000, intervalMs: 20 });
      expect(reader.listSamples({ camera: 'riverside--door', zone: 'entrance' })).toEqual([{ time, camera: 'riverside--door', zone: 'entrance', kind: 'count', value: 2, intervalMs: 10_000, quality: 0 }]);
      expect(reader.getCamera('riverside--door')?.name).toBe('Front door (riverside)');
    } finally {
      reader.close();
    }
    await publisher.stop();
    stop();
    expect(await exit).toBe(0);
  });

  it('logs JSON lines without its admin key or MQTT password; --log-level warn drops the info lines', async () => {
    broker = await startBroker();
    dir = mkdtempSync(join(tmpdir(), 'residuum-collect-'));
    const adminKey = 'k9J8h7G6f5D4s3A2p1O0i9U8y7T6r5E4w3Q2zxcvbnm';
    const password = 'collector-Pa55word-never-logged';
    const keyFile = join(dir, 'admin-key');
    writeFileSync(keyFile, adminKey);
    chmodSync(keyFile, 0o600);
    const config = join(dir, 'collect.yaml');
    writeFileSync(config, `site: { name: Head office, timeZone: Europe/Berlin }\nserver: { host: 127.0.0.1, port: 0 }\nmqtt: { url: "${broker.url}", clientId: collect-log-test, username: collector, password: "${password}" }\n`);
    // The broker sees the collector log in with its password (aedes accepts any by default).
    const logins: (string | undefined)[] = [];
    broker.aedes.authenticate = (_client, _username, pass, done) => {
      logins.push(pass?.toString('utf8'));
      done(null, true);
    };
    const runOnce = async (extra: string[]) => {
      let out = '';
      let stop!: () => void;
      const until = new Promise<void>((done) => (stop = done));
      const before = logins.length;
      const exit = collectCommand(['--config', config, '--data', join(dir!, 'data'), ...extra], { until, env: { RESIDUUM_ADMIN_KEY_FILE: keyFile }, out: { write: (t: string) => (out += t) } });
      await waitUntil(() => logins.length > before, { what: 'the collector to log in to the broker', timeoutMs: 30_000, intervalMs: 20 });
      expect(logins.at(-1)).toBe(password);
      // A wrong key, so that the log has a warning of its own (the key given is not echoed either).
      const url = await waitUntil(() => collectorUrl(out), { what: 'the collector to listen', timeoutMs: 30_000, intervalMs: 20 });
      const wrongKey = () => fetch(`${url}api/settings`, { method: 'PUT', headers: { Authorization: `Bearer ${adminKey.slice(0, -1)}X`, 'Content-Type': 'application/json' }, body: '{}' });
      // Retried only while nothing listens yet (at warn level the port is known before the server is up).
      expect(await waitUntil(async () => (await wrongKey().catch(() => undefined))?.status, { what: 'an answer to a wrong key', timeoutMs: 30_000, intervalMs: 50 })).toBe(401);
      stop();
      expect(await exit).toBe(0);
      expect(out).not.toContain(adminKey);
      expect(out).not.toContain(password);
      return logRecords(out); // throws naming a line that is not a JSON record
    };
    /** The dashboard's address: from its info line, or at warn level (no such line) the port given with --port. */
    let port = 0;
    const collectorUrl = (out: string) => /dashboard at (http:\/\/[^\s"]+)/.exec(out)?.[1] ?? (port > 0 ? `http://127.0.0.1:${port}/` : undefined);
    const all = await runOnce([]);
    expect(all.find((r) => r.msg.startsWith('collecting from'))).toMatchObject({ level: 'info' });
    expect(all.find((r) => r.msg.startsWith('mqtt: connected'))).toMatchObject({ level: 'info', component: 'mqtt' });
    expect(all.map((r) => r.msg).slice(-2)).toEqual(['stopping', 'stopped']);
    expect(all.find((r) => r.msg.startsWith('auth: a wrong key'))).toMatchObject({ level: 'warn', component: 'auth' });
    // At warn the dashboard line is not logged: the port comes from the first run's.
    port = Number(new URL(all.find((r) => r.msg.startsWith('collecting from'))!.msg.replace(/^.*dashboard at /, '')).port);
    const warnings = await runOnce(['--log-level', 'warn', '--port', String(port)]);
    expect(warnings.filter((r) => r.level === 'info' || r.level === 'debug')).toEqual([]);
    expect(warnings.map((r) => r.msg)).toEqual([expect.stringMatching(/^auth: a wrong key from .* on PUT \/api\/settings/)]);
  });

  it('refuses a bad configuration before opening the database', async () => {
    dir = mkdtempSync(join(tmpdir(), 'residuum-collect-'));
    const config = join(dir, 'collect.yaml');
    writeFileSync(config, 'mqtt: { url: "mqtt://127.0.0.1:1", topicPrefix: "a/#" }\n');
    let out = '';
    await expect(collectCommand(['--config', config, '--data', join(dir, 'data')], { until: Promise.resolve(), out: { write: (t: string) => (out += t) } })).rejects.toThrow(/collect\.yaml: mqtt\.topicPrefix must not contain/);
    // The reason is in the JSON log too, at level fatal (the command line prints it on standard error).
    expect(logRecords(out).map((r) => [r.level, r.msg])).toEqual([['fatal', expect.stringMatching(/^cannot start: .*collect\.yaml: mqtt\.topicPrefix must not contain/)]]);
    await expect(collectCommand(['--data', dir])).rejects.toThrow(/--config is required/);
  });

  it.skipIf(!pgAvailable)('with storage.url collects into PostgreSQL; the dashboard, the hourly CSV and /metrics read from it', async () => {
    broker = await startBroker();
    dir = mkdtempSync(join(tmpdir(), 'residuum-collect-'));
    const db = await testDatabase();
    const source = sourceStore();
    try {
      const config = join(dir, 'collect.yaml');
      writeFileSync(config, `site: { name: Head office, timeZone: ${TIME_ZONE} }\nstorage: { url: "${db.url}", sampleRetentionDays: 36500 }\nserver: { host: 127.0.0.1, port: 0 }\nmqtt: { url: "${broker.url}", clientId: collect-pg-test }\n`);
      const lines: string[] = [];
      let stop!: () => void;
      const until = new Promise<void>((done) => (stop = done));
      const exit = collectCommand(['--config', config, '--data', join(dir, 'keys')], { until, log: (l) => lines.push(l), out: { write: () => true } });
      const url = await waitUntil(() => lines.map((l) => /dashboard at (http:\/\/\S+)/.exec(l)?.[1]).find(Boolean), { what: 'the dashboard line', timeoutMs: 30_000, intervalMs: 20 });
      expect(lines.join('\n')).toContain(`into postgres://postgres@127.0.0.1:5432/${db.name}`);
      // Not a terminal: the new keys go to a file of their own, and the log says where, not what.
      await waitUntil(() => lines.some((l) => l.includes(`written to ${join(dir!, 'keys', 'new-keys.txt')}`)), { what: 'the new-keys line', timeoutMs: 10_000, intervalMs: 20 });
      const key = /^ {2}([A-Za-z0-9_-]{43})$/m.exec(readFileSync(join(dir, 'keys', 'new-keys.txt'), 'utf8'))?.[1];
      expect(key).toBeDefined();
      expect(lines.join('\n')).not.toContain(key!);
      const publisher = createMqttPublisher(validateMqttSettings({ url: broker.url, stateIntervalSeconds: 0 }), { site: 'riverside', backoff: FAST, store: source.store });
      await waitUntil(() => publisher.stats().connected, { what: 'the publisher to connect', timeoutMs: 30_000, intervalMs: 20 });
      const writer = reportingStore(source.store, publisher);
      const batches = inventedBatches(11);
      for (const b of batches) writer.insertSamples(b);
      const n = batches.length * ZONES.length;
      await waitUntil(() => publisher.stats().unconfirmedSamples === 0 && publisher.stats().queuedSamples === 0 && publisher.stats().inFlight === 0 && publisher.stats().samplesPublished >= n, { what: `all ${n} samples confirmed`, timeoutMs: 60_000, intervalMs: 50 });
      // The dashboard's hourly CSV, read from PostgreSQL, is the site's own, camera ids prefixed with the site.
      const csv = await (await fetch(`${url}api/export/hourly.csv?from=2026-03-02&to=2026-03-02`)).text();
      expect(csv.replaceAll(',riverside--', ',')).toBe(dayCsv(source.store));
      const metrics = await (await fetch(`${url}metrics`)).text();
      // check: Prometheus text exposition format, one "name value" line per series
      expect(metrics).toMatch(new RegExp(`^residuum_collector_samples_stored_total ${n}$`, 'm'));
      expect(metrics).toMatch(/^residuum_collector_samples_missing 0$/m);
      await publisher.stop();
      stop();
      expect(await exit).toBe(0);
    } finally {
      source.cleanup();
      await db.drop();
    }
  });
});
