import { afterEach, describe, expect, it } from 'vitest';
import { reportingStore } from '../../../src/store/reportingStore.ts';
import type { Sample } from '../../../src/store/index.ts';
import { mulberry } from '../../helpers/random.ts';
import { waitUntil } from '../../service/waitUntil.ts';
import type { TempStore } from '../../store/tempStore.ts';
import { connect } from 'mqtt';
import { observe, startBroker } from './broker.ts';
import { createMqttPublisher } from '../../../src/outputs/mqtt/mqttPublisher.ts';
import { startCollector } from '../../../src/outputs/mqtt/mqttCollector.ts';
import { sqliteCollectorStore } from '../../../src/store/collectorStore.ts';
import { validateMqttSettings } from '../../../src/outputs/mqtt/mqttSettings.ts';
import { tempStore } from '../../store/tempStore.ts';
import { dayCsv, FAST, inventedBatches, samplesOf, SITE, sourceStore, startRig, TIME_ZONE, ZONES, type Rig } from './fixtures.ts';

/**
 * Publisher → aedes (an independent MQTT 3.1.1 broker, in process on 127.0.0.1) → collector: the
 * collector's database must end up with exactly the source database's samples, whatever the
 * broker did in between.
 */

let rig: Rig | undefined;
let source: TempStore | undefined;
afterEach(async () => {
  await rig?.close();
  source?.cleanup();
  rig = undefined;
  source = undefined;
});

const wait = { timeoutMs: 60_000, intervalMs: 25 };

// check: the source database itself is the reference; the messages travel through aedes, an
// independent MQTT broker, with its own QoS 1 and persistent-session handling.
function expectSameSamples(): void {
  for (const [camera, zone] of ZONES) {
    const expected = samplesOf(source!.store, camera, zone);
    expect(expected.length).toBeGreaterThan(100);
    expect(samplesOf(rig!.target.store, `${SITE}--${camera}`, zone, camera)).toEqual(expected);
  }
}

function expectSameCsv(): void {
  const csv = dayCsv(source!.store);
  // The zones exist from 07:00 local: 17 hours × 3 zones plus the header. 07:00 local (before the
  // first sample) and 11:00 local (the outage) have no data (coverage 0, empty values), yet a row,
  // in both databases: the zones' creation time travels with the samples.
  expect(csv.split('\r\n').length).toBe(1 + 17 * 3 + 1);
  expect(csv).not.toContain('2026-03-02T06:00:00+01:00');
  expect(csv).toContain('2026-03-02T07:00:00+01:00,door,entrance,,,,,0,0\r\n');
  expect(csv).toContain('2026-03-02T11:00:00+01:00,door,entrance,,,,,0,0\r\n');
  expect(csv).toMatch(/2026-03-02T09:00:00\+01:00,door,entrance,\d+(\.\d+)?,/);
  expect(dayCsv(rig!.target.store).replaceAll(`,${SITE}--`, ',')).toBe(csv);
}

function shuffled<T>(items: readonly T[], seed: number): T[] {
  // Fisher–Yates with a seeded generator.
  const out = [...items];
  const random = mulberry(seed);
  for (let i = out.length - 1; i > 0; i--) {
    const j = Math.floor(random() * (i + 1));
    [out[i], out[j]] = [out[j], out[i]];
  }
  return out;
}

describe('publisher → broker → collector', () => {
  it('stores exactly the source samples and events; rollups and hourly CSV come out equal', async () => {
    source = sourceStore();
    rig = await startRig({ publisher: { store: source.store } });
    const { publisher, collector, target } = rig;
    const store = reportingStore(source.store, publisher);
    const batches = inventedBatches();
    for (const batch of batches) store.insertSamples(batch);
    const n = batches.length * ZONES.length;
    await waitUntil(() => collector.stats().samplesStored === n, { what: `${n} samples in the collector`, ...wait });
    store.insertEvent({ camera: 'door', zone: 'entrance', type: 'capacity-exceeded', detail: { count: 11, capacity: 10 }, time: Date.UTC(2026, 2, 2, 8, 30) });
    store.insertEvent({ camera: 'stacks', type: 'offline', detail: { reason: 'timeout' }, time: Date.UTC(2026, 2, 2, 9, 10) });
    await waitUntil(() => collector.stats().eventsStored === 2, { what: 'two events in the collector', ...wait });
    expect(collector.stats()).toMatchObject({ samplesStored: n, duplicates: 0, conflicts: 0, rejected: 0 });
    expectSameSamples();
    // Rollups are exact integer sums: the same in both databases, bucket for bucket.
    const rollups = (s: typeof target.store, prefix: string) => s.listRollups().map((r) => ({ ...r, camera: r.camera.slice(prefix.length) }));
    expect(rollups(target.store, `${SITE}--`)).toEqual(rollups(source.store, ''));
    expectSameCsv();
    const events = (s: typeof target.store, prefix: string) => s.listEvents().map(({ id: _id, ...e }) => ({ ...e, camera: e.camera.slice(prefix.length) }));
    expect(events(target.store, `${SITE}--`)).toEqual(events(source.store, ''));
    // The collector knows zones only from their samples: kind from the sample, creation time from the source.
    expect(target.store.getZone(`${SITE}--stacks`, 'returns')).toMatchObject({ zone: { kind: 'shelf' }, created: source.store.getZone('stacks', 'returns')!.created });
  });

  it('stores each sample once when every message comes twice, in shuffled order', async () => {
    source = sourceStore();
    // Without a numbering store the publisher sends what it is given (and the collector must sort it out).
    const zones = source.store;
    rig = await startRig({ publisher: { store: { getZone: (c, z) => zones.getZone(c, z), listSamples: (q) => zones.listSamples(q) } } });
    const { publisher, collector } = rig;
    const samples: Sample[] = inventedBatches(2).flat();
    source.store.insertSamples(samples);
    for (const s of shuffled([...samples, ...samples], 5)) publisher.publishSample(s);
    const n = samples.length;
    await waitUntil(() => collector.stats().samplesStored === n && collector.stats().duplicates >= n, { what: `${n} samples and ${n} duplicates`, ...wait });
    expect(collector.stats()).toMatchObject({ conflicts: 0, rejected: 0 });
    expectSameSamples();
    expectSameCsv();
  });

  it('loses nothing while the broker is away: the site database is the queue, the collector confirms', async () => {
    source = sourceStore();
    rig = await startRig({ mqtt: { queueLimit: 20 }, publisher: { store: source.store } });
    const { broker, publisher, collector } = rig;
    broker.down();
    await waitUntil(() => !publisher.stats().connected && !collector.connected, { what: 'both clients to notice', ...wait });
    const store = reportingStore(source.store, publisher);
    const batches = inventedBatches(3);
    for (const batch of batches) store.insertSamples(batch);
    const n = batches.length * ZONES.length;
    // The database has everything; nothing waits in memory, nothing is dropped.
    expect(source.store.listSamples({ camera: 'door', zone: 'tables' }).length).toBe(batches.length);
    expect(publisher.stats()).toMatchObject({ samplesDropped: 0, backfillPending: 0 });
    broker.up();
    await waitUntil(() => collector.stats().samplesStored === n, { what: `${n} samples in the collector`, ...wait });
    // The collector confirms every camera's numbers 1..last: nothing stays unconfirmed at the site.
    await waitUntil(() => publisher.stats().unconfirmedSamples === 0 && publisher.stats().queuedSamples === 0, { what: 'every sample confirmed', ...wait });
    // The acks are remembered at the site (within a second).
    await waitUntil(() => (source!.store.getSetting('mqtt.confirmed') as { cameras?: Record<string, number> } | undefined)?.cameras?.stacks === batches.length, { what: 'the acks saved', ...wait });
    expect(source.store.getSetting('mqtt.confirmed')).toMatchObject({ cameras: { door: 2 * batches.length, stacks: batches.length } });
    expect(collector.stats()).toMatchObject({ conflicts: 0, rejected: 0, samplesMissing: 0 });
    expectSameSamples();
    expectSameCsv();
  });

  it('without the store, only the newest samples of the bounded queue reach the collector', async () => {
    source = sourceStore();
    rig = await startRig({ mqtt: { queueLimit: 20 } });
    const { broker, publisher, collector, target } = rig;
    broker.down();
    await waitUntil(() => !publisher.stats().connected, { what: 'the publisher to notice', ...wait });
    const store = reportingStore(source.store, publisher);
    const samples = inventedBatches(4).flat();
    store.insertSamples(samples);
    expect(publisher.stats()).toMatchObject({ queuedSamples: 20, samplesDropped: samples.length - 20, backfillPending: 0 });
    broker.up();
    await waitUntil(() => collector.stats().samplesStored === 20 && publisher.stats().queuedSamples === 0 && publisher.stats().inFlight === 0, { what: '20 samples in the collector', ...wait });
    const received = ZONES.flatMap(([camera, zone]) => samplesOf(target.store, `${SITE}--${camera}`, zone, camera));
    const newest = samples.slice(-20).map((s) => ({ ...s, quality: s.quality ?? 0 }));
    const key = (s: Sample) => `${s.camera}/${s.zone}/${s.time}`;
    expect(received.sort((a, b) => key(a).localeCompare(key(b)))).toEqual(newest.sort((a, b) => key(a).localeCompare(key(b))));
  });

  it('refuses a conflicting sample and keeps the stored one; an older sample that overlaps nothing is stored', async () => {
    source = sourceStore();
    rig = await startRig();
    const { publisher, collector, target } = rig;
    const base = { camera: 'door', zone: 'entrance', kind: 'count' as const, intervalMs: 30_000, quality: 0 };
    const t = Date.UTC(2026, 2, 2, 8, 0);
    publisher.publishSample({ ...base, time: t, value: 3 });
    await waitUntil(() => collector.stats().samplesStored === 1, { what: 'the first sample', ...wait });
    publisher.publishSample({ ...base, time: t, value: 4 }); // same interval, other value
    publisher.publishSample({ ...base, time: t + 10_000, value: 3 }); // overlaps [t − 20 s, t)
    publisher.publishSample({ ...base, time: t, value: 3, quality: 1 }); // same value, other flags
    publisher.publishSample({ ...base, time: t - 60_000, value: 1 }); // older, before the stored interval
    publisher.publishSample({ ...base, time: t - 30_000, value: 2 }); // ends where the stored one starts
    await waitUntil(() => collector.stats().conflicts === 3 && collector.stats().samplesStored === 3, { what: 'three conflicts and three samples', ...wait });
    expect(target.store.listSamples({ camera: `${SITE}--door`, zone: 'entrance' }).map((s) => [s.time - t, s.value, s.quality])).toEqual([
      [-60_000, 1, 0],
      [-30_000, 2, 0],
      [0, 3, 0],
    ]);
    expect(rig.log.some((l) => /conflicts with the stored one/.test(l))).toBe(true);
  });

  it('a site that dies: its will says offline, and the collector turns its retained zone states offline', async () => {
    rig = await startRig({ collector: { offlineGraceMs: 300 } });
    const { broker, collector } = rig;
    const status = `residuum/${SITE}/status`;
    const topic = `residuum/${SITE}/door/entrance/state`;
    // A site of its own (a plain client that never reconnects), with the publisher's will and messages.
    const site = async (id: string) => {
      const c = connect(broker.url, { clientId: id, reconnectPeriod: 0, will: { topic: status, payload: Buffer.from(JSON.stringify({ site: SITE, state: 'offline' })), qos: 1, retain: true } });
      await new Promise<void>((done) => c.once('connect', () => done()));
      await c.publishAsync(status, JSON.stringify({ site: SITE, state: 'online' }), { qos: 1, retain: true });
      return c;
    };
    const state = { camera: 'door', cameraName: 'Front door', zone: 'entrance', zoneName: 'Entrance', kind: 'room', count: 3, capacity: 10, state: 'below', time: new Date().toISOString() };
    const first = await site('site-1');
    await first.publishAsync(topic, JSON.stringify(state), { qos: 1, retain: true });
    const o = await observe(broker.url, topic);
    await waitUntil(() => collector.live().length === 1 && collector.live()[0].state === 'online', { what: 'the collector to see the zone', ...wait });
    broker.cut('site-1');
    // check: MQTT 3.1.1 §3.1.2.5 — the broker publishes the will when the connection closes without DISCONNECT (recalled from memory)
    await waitUntil(() => o.bodies(topic).some((b) => (b as { state: string }).state === 'offline'), { what: 'an offline zone state', ...wait });
    expect(o.bodies(topic).at(-1)).toMatchObject({ camera: 'door', zone: 'entrance', kind: 'room', count: null, capacity: 10, state: 'offline' });
    expect(collector.live()[0].state).toBe('offline');
    // Retained: a subscriber that comes later sees the site offline, not its last count.
    const later = await observe(broker.url, topic);
    await waitUntil(() => later.messages.length >= 1, { what: 'the retained state', ...wait });
    expect(later.bodies(topic)[0]).toMatchObject({ state: 'offline', count: null });
    // A site back within the grace is left alone: no offline state is sent for it.
    const second = await site('site-2');
    await second.publishAsync(topic, JSON.stringify(state), { qos: 1, retain: true });
    await waitUntil(() => (o.bodies(topic).at(-1) as { state: string }).state === 'below', { what: 'the state back', ...wait });
    broker.cut('site-2');
    const third = await site('site-3');
    await third.publishAsync(topic, JSON.stringify(state), { qos: 1, retain: true });
    await new Promise((done) => setTimeout(done, 800));
    expect((o.bodies(topic).at(-1) as { state: string }).state).toBe('below');
    await third.endAsync();
    for (const x of [o, later]) await x.close();
    first.end(true);
    second.end(true);
  });

  it('a collector that comes late gets the whole history; what the site pruned before is counted as lost, not waited for', async () => {
    source = sourceStore();
    const broker = await startBroker();
    const target = tempStore({ timeZone: TIME_ZONE });
    const publisher = createMqttPublisher(validateMqttSettings({ url: broker.url, stateIntervalSeconds: 0 }), { site: SITE, store: source.store, backoff: FAST, replay: { graceMs: 200, afterMs: 1000 } });
    const collectorSettings = validateMqttSettings({ url: broker.url, clientId: 'late-collector' }, { role: 'collector' });
    let collector: ReturnType<typeof startCollector> | undefined;
    try {
      await waitUntil(() => publisher.stats().connected, { what: 'the publisher to connect', ...wait });
      const writer = reportingStore(source.store, publisher);
      const batches = inventedBatches(12);
      const half = Math.floor(batches.length / 2);
      // Published while no collector listens: nobody gets them.
      for (const b of batches.slice(0, half)) writer.insertSamples(b);
      await waitUntil(() => publisher.stats().queuedSamples === 0 && publisher.stats().inFlight === 0, { what: 'the first half sent', ...wait });
      // The site's retention removes the oldest of them before any collector confirmed them.
      const { deleted } = source.store.pruneSamples(Date.UTC(2026, 2, 2, 8, 0));
      expect(deleted).toBeGreaterThan(100);
      collector = startCollector(collectorSettings, { store: sqliteCollectorStore(target.store), backoff: FAST });
      await waitUntil(() => collector!.stats().subscribed, { what: 'the collector to subscribe', ...wait });
      for (const b of batches.slice(half)) writer.insertSamples(b);
      // Its first ack (0: it misses 1, 2, …) makes the site send everything from 1 again; the pruned ones are a gap.
      const remaining = batches.length * ZONES.length - deleted;
      await waitUntil(() => collector!.stats().samplesStored === remaining && publisher.stats().unconfirmedSamples === 0 && publisher.stats().queuedSamples === 0, { what: `${remaining} samples stored and confirmed`, ...wait });
      expect(collector.stats()).toMatchObject({ samplesLost: deleted, samplesMissing: 0, conflicts: 0, rejected: 0 });
      for (const [camera, zone] of ZONES) expect(samplesOf(target.store, `${SITE}--${camera}`, zone, camera)).toEqual(samplesOf(source.store, camera, zone));
      expect(target.store.listSamples({ camera: `${SITE}--door`, zone: 'entrance' }).length).toBe(source.store.listSamples({ camera: 'door', zone: 'entrance' }).length);
    } finally {
      await publisher.stop();
      await collector?.stop();
      await broker.close();
      target.cleanup();
    }
  });

  it('a sample the store refuses is skipped and confirmed (counted, logged); a store that is away leaves the batch unconfirmed until it is back', async () => {
    source = sourceStore();
    const broker = await startBroker();
    const target = tempStore({ timeZone: TIME_ZONE });
    const real = sqliteCollectorStore(target.store);
    // Injected faults: the store refuses one value (as it refuses invalid data, naming the field), and is away for a while.
    let away = false;
    const faulty = {
      ...real,
      storeSamples(batch: readonly Sample[]) {
        if (away) throw new Error('connection refused (injected)');
        if (batch.some((x) => x.value === 7.77)) throw new RangeError('sample.value: refused (injected)');
        return real.storeSamples(batch);
      },
    };
    const log: string[] = [];
    const collector = startCollector(validateMqttSettings({ url: broker.url, clientId: 'faulty-collector' }, { role: 'collector' }), { store: faulty, backoff: FAST, log: (l) => log.push(l) });
    const publisher = createMqttPublisher(validateMqttSettings({ url: broker.url, stateIntervalSeconds: 0 }), { site: SITE, store: source.store, backoff: FAST, replay: { graceMs: 200, afterMs: 500, maxMs: 1000 } });
    try {
      await waitUntil(() => collector.stats().subscribed && publisher.stats().connected, { what: 'both to connect', ...wait });
      const writer = reportingStore(source.store, publisher);
      const batches = inventedBatches(13).slice(0, 60);
      batches[20] = batches[20].map((x) => (x.zone === 'tables' ? { ...x, value: 7.77 } : x));
      for (const b of batches.slice(0, 30)) writer.insertSamples(b);
      await waitUntil(() => collector.stats().samplesStored === 30 * 3 - 1, { what: 'all but the refused sample', ...wait });
      away = true;
      for (const b of batches.slice(30)) writer.insertSamples(b);
      await waitUntil(() => log.some((l) => /could not store \d+ samples \(connection refused/.test(l)), { what: 'the store failing', ...wait });
      away = false;
      const n = batches.length * 3;
      await waitUntil(() => collector.stats().samplesStored === n - 1 && publisher.stats().unconfirmedSamples === 0 && publisher.stats().queuedSamples === 0, { what: `${n - 1} samples stored, all confirmed`, ...wait });
      expect(collector.stats()).toMatchObject({ samplesMissing: 0, conflicts: 0 });
      expect(collector.stats().rejected).toBeGreaterThanOrEqual(1);
      expect(publisher.stats().replays).toBeGreaterThanOrEqual(1);
      expect(log.some((l) => /the store refused sample riverside\/door\/tables\/\d+: sample\.value: refused/.test(l))).toBe(true);
      const tables = samplesOf(target.store, `${SITE}--door`, 'tables', 'door');
      expect(tables.length).toBe(batches.length - 1);
      expect(tables).toEqual(samplesOf(source.store, 'door', 'tables').filter((x) => x.value !== 7.77));
    } finally {
      await publisher.stop();
      await collector.stop();
      await broker.close();
      target.cleanup();
    }
  });
});
