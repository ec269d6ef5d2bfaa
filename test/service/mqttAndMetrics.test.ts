import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { connect } from 'mqtt';
import { parse, stringify } from 'yaml';
import { afterAll, describe, expect, it } from 'vitest';
import { startService } from '../../src/commands/run.ts';
import { loadConfig } from '../../src/config/loadConfig.ts';
import { startBroker } from '../outputs/mqtt/broker.ts';
import { testConfig } from './testConfig.ts';
import { waitUntil } from './waitUntil.ts';

// The running service publishes over MQTT (to an in-process aedes broker on 127.0.0.1, a real
// MQTT 3.1.1/5 broker) and serves /metrics, with the synthetic reading room as its camera.
const dir = mkdtempSync(join(tmpdir(), 'residuum-mqtt-service-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('the service with MQTT and metrics', () => {
  it('publishes retained zone states and committed samples, and serves Prometheus metrics', async () => {
    const broker = await startBroker();
    const file = testConfig(dir);
    const doc = parse(readFileSync(file, 'utf8'));
    writeFileSync(file, stringify({ ...doc, mqtt: { url: broker.url, topicPrefix: 'residuum-test', site: 'branch' } }));
    const config = loadConfig(file);
    const service = await startService(config, { dataDir: join(dir, 'data'), port: 0 });
    const subscriber = connect(broker.url, { clientId: 'test-subscriber' });
    const states = new Map<string, unknown>();
    const samples: unknown[] = [];
    subscriber.on('message', (topic, payload) => {
      if (topic.endsWith('/state')) states.set(topic, JSON.parse(payload.toString()));
      if (topic.endsWith('/samples')) samples.push(JSON.parse(payload.toString()));
    });
    try {
      await new Promise<void>((done, fail) => subscriber.on('connect', () => subscriber.subscribe('residuum-test/#', { qos: 1 }, (e) => (e ? fail(e) : done()))));
      await waitUntil(() => states.size >= 3 && samples.length >= 3, { what: 'zone states and samples over MQTT', timeoutMs: 60_000 });
      const tables = states.get('residuum-test/branch/reading-room/tables/state') as Record<string, unknown>;
      expect(tables).toMatchObject({ camera: 'reading-room', zone: 'tables', kind: 'room' });
      expect(['below', 'near', 'over', 'ok', 'learning', 'offline', 'view-changed']).toContain(tables.state);
      const sample = samples[0] as { camera: string; zone: string; time: number; value: number };
      const stored = service.store.listSamples({ camera: sample.camera, zone: sample.zone }).find((s) => s.time === sample.time);
      expect(stored?.value).toBe(sample.value);

      const metrics = await fetch(`http://127.0.0.1:${service.port}/metrics`);
      expect(metrics.status).toBe(200);
      expect(metrics.headers.get('content-type')).toMatch(/^text\/plain/);
      const text = await metrics.text();
      // check: Prometheus text exposition format (metric{labels} value lines)
      expect(text).toMatch(/^residuum_zone_people\{[^}]*camera="reading-room"[^}]*zone="tables"[^}]*\} \d+(\.\d+)?$/m);
    } finally {
      subscriber.end(true);
      await service.stop();
      await broker.close();
    }
  });
});
