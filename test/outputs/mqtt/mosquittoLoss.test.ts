import { spawn, type ChildProcess } from 'node:child_process';
import { once } from 'node:events';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { sqliteCollectorStore } from '../../../src/store/collectorStore.ts';
import { startCollector, type Collector } from '../../../src/outputs/mqtt/mqttCollector.ts';
import { createMqttPublisher, type MqttPublisher } from '../../../src/outputs/mqtt/mqttPublisher.ts';
import { validateMqttSettings } from '../../../src/outputs/mqtt/mqttSettings.ts';
import { reportingStore } from '../../../src/store/reportingStore.ts';
import { openStore, type Sample, type Store } from '../../../src/store/index.ts';
import { waitUntil } from '../../service/waitUntil.ts';
import { tempStore, type TempStore } from '../../store/tempStore.ts';
import { FAST, samplesOf, SITE, sourceStore, ZONES } from './fixtures.ts';
import { cleanUpBroker, listening, ownMosquitto, SHARED_BROKER, testPrefix, type OwnBroker } from './realBroker.ts';

/**
 * Loss tests against the real Mosquitto (127.0.0.1:1883, as installed: its default per-client
 * queue of 1000 messages, `max_queued_messages`, is what lost samples before sites numbered them)
 * and against Mosquitto instances of our own for broker restarts. Every sample the site stored
 * must be in the collector's database exactly once.
 *
 * The collector's outage lasts RESIDUUM_LOSS_OUTAGE_SECONDS (default 8 s, enough to overflow the
 * broker's queue at the 150 samples/s written here); `npm run loss` runs it with 60 s.
 */

const brokerUp = await listening(SHARED_BROKER.host, SHARED_BROKER.port);
const mosquittoInstalled = await new Promise<boolean>((done) => {
  const p = spawn('mosquitto', ['-h'], { stdio: 'ignore' });
  p.once('error', () => done(false));
  p.once('exit', () => done(true));
});
if (!brokerUp) console.warn('mosquittoLoss: no MQTT broker at 127.0.0.1:1883, skipping (start it: mosquitto -d -c /etc/mosquitto/mosquitto.conf)');
if (!mosquittoInstalled) console.warn('mosquittoLoss: mosquitto is not installed, skipping the broker restart test');

const OUTAGE_MS = Number(process.env.RESIDUUM_LOSS_OUTAGE_SECONDS ?? 8) * 1000;
/** An hour ago: recent enough that the collector's retention (30 days) keeps the samples when it starts again. */
const START = Math.floor(Date.now() / 60_000) * 60_000 - 3_600_000;
/** Quick replays for tests: an ack that leaves samples sent 1 s ago unconfirmed, or 5 s without progress. */
const REPLAY = { graceMs: 1000, afterMs: 5000, maxMs: 10_000 } as const;

/** The n first samples of the site, three zones every second (one batch per second, as the pipeline writes them). */
function plannedBatches(n: number): Sample[][] {
  const batches: Sample[][] = [];
  for (let k = 0; k < n; k += ZONES.length) {
    const time = START + (k / ZONES.length + 1) * 1000;
    batches.push(
      ZONES.slice(0, Math.min(ZONES.length, n - k)).map(([camera, zone], j) =>
        zone === 'returns'
          ? { time, camera, zone, kind: 'fill' as const, value: ((k + j) % 97) / 96, intervalMs: 1000 }
          : { time, camera, zone, kind: 'count' as const, value: ((k + j) % 23) / 2, intervalMs: 1000 },
      ),
    );
  }
  return batches;
}

/** Writes the batches into the site's store, `perSecond` samples a second (all at once with Infinity). */
async function write(store: Store, batches: Sample[][], perSecond: number): Promise<void> {
  const everyMs = (ZONES.length / perSecond) * 1000;
  const begun = Date.now();
  for (let i = 0; i < batches.length; i++) {
    store.insertSamples(batches[i]);
    const due = begun + (i + 1) * everyMs;
    if (Number.isFinite(everyMs) && due > Date.now()) await new Promise((done) => setTimeout(done, due - Date.now()));
    else if (i % 200 === 0) await new Promise((done) => setImmediate(done));
  }
}

function expectExactlyOnce(source: Store, target: Store, n: number): void {
  let total = 0;
  for (const [camera, zone] of ZONES) {
    const expected = samplesOf(source, camera, zone);
    total += expected.length;
    // check: the site's own database is the reference; the messages went through Mosquitto.
    expect(samplesOf(target, `${SITE}--${camera}`, zone, camera)).toEqual(expected);
  }
  expect(total).toBe(n);
}

/** `residuum collect` as its own process, so that it can be killed with SIGKILL. */
function collectorProcess(configFile: string, dataDir: string) {
  let child: ChildProcess | undefined;
  let output = '';
  return {
    async start() {
      child = spawn(process.execPath, ['bin/residuum.js', 'collect', '--config', configFile, '--data', dataDir, '--port', '0'], { stdio: ['ignore', 'pipe', 'pipe'] });
      child.stdout!.on('data', (d: Buffer) => (output += d.toString()));
      child.stderr!.on('data', (d: Buffer) => (output += d.toString()));
      await waitUntil(() => output.includes('collecting from') || child!.exitCode !== null, { what: 'the collector to start', timeoutMs: 60_000, intervalMs: 50 });
      if (child.exitCode !== null) throw new Error(`collector exited: ${output}`);
    },
    async kill(signal: NodeJS.Signals) {
      if (!child || child.exitCode !== null) return;
      const exited = once(child, 'exit');
      child.kill(signal);
      await exited;
    },
    get output() {
      return output;
    },
  };
}

let cleanup: (() => Promise<void> | void)[] = [];
afterEach(async () => {
  for (const step of cleanup.reverse()) await step();
  cleanup = [];
});

function sitePublisher(url: string, prefix: string, source: TempStore): MqttPublisher {
  const publisher = createMqttPublisher(validateMqttSettings({ url, topicPrefix: prefix, stateIntervalSeconds: 0 }), { site: SITE, store: source.store, backoff: FAST, replay: REPLAY });
  cleanup.push(() => publisher.stop());
  return publisher;
}

const confirmedAll = (publisher: MqttPublisher) => () => publisher.stats().unconfirmedSamples === 0 && publisher.stats().queuedSamples === 0 && publisher.stats().inFlight === 0;

describe.skipIf(!brokerUp)('collection through the real Mosquitto loses nothing', () => {
  it(`collector killed with SIGKILL for ${OUTAGE_MS / 1000} s while the site writes 150 samples/s`, { timeout: OUTAGE_MS + 240_000 }, async () => {
    const prefix = testPrefix('kill');
    const clientId = `residuum-test-collector-${process.pid}`;
    const dir = mkdtempSync(join(tmpdir(), 'residuum-loss-'));
    const source = sourceStore();
    cleanup.push(() => source.cleanup(), () => rmSync(dir, { recursive: true, force: true }));
    cleanup.push(() => cleanUpBroker(SHARED_BROKER.url, prefix, [clientId]));
    const configFile = join(dir, 'collect.yaml');
    writeFileSync(configFile, `site: { name: Head office, timeZone: Europe/Berlin }\nmqtt: { url: "${SHARED_BROKER.url}", topicPrefix: ${prefix}, clientId: ${clientId}, sessionExpirySeconds: 600 }\n`);
    const collector = collectorProcess(configFile, join(dir, 'data'));
    cleanup.push(() => collector.kill('SIGKILL'));
    await collector.start();
    const publisher = sitePublisher(SHARED_BROKER.url, prefix, source);
    await waitUntil(() => publisher.stats().connected, { what: 'the site to connect', timeoutMs: 20_000, intervalMs: 20 });

    const seconds = OUTAGE_MS / 1000 + 12;
    const batches = plannedBatches(150 * seconds);
    const n = batches.flat().length;
    const writing = write(reportingStore(source.store, publisher), batches, 150);
    await new Promise((done) => setTimeout(done, 4000));
    await collector.kill('SIGKILL');
    await new Promise((done) => setTimeout(done, OUTAGE_MS));
    await collector.start();
    await writing;
    await waitUntil(confirmedAll(publisher), { what: `the collector to confirm all ${n} samples`, timeoutMs: 180_000, intervalMs: 100 }).catch((error: Error) => {
      throw new Error(`${error.message}; site ${JSON.stringify(publisher.stats())}; collector said:\n${collector.output.slice(-3000)}`);
    });
    await collector.kill('SIGTERM');

    const target = openStore(join(dir, 'data', 'residuum.db'));
    try {
      expectExactlyOnce(source.store, target, n);
    } finally {
      target.close();
    }
    // Mosquitto kept at most 1000 messages for the absent collector: the rest came from the site's replays.
    expect(publisher.stats().replays).toBeGreaterThanOrEqual(1);
  });

  it('a burst of 20 000 samples arrives exactly once', { timeout: 300_000 }, async () => {
    const prefix = testPrefix('burst');
    const clientId = `residuum-test-burst-${process.pid}`;
    const source = sourceStore();
    const target = tempStore({ timeZone: 'Europe/Berlin' });
    cleanup.push(() => source.cleanup(), () => target.cleanup());
    cleanup.push(() => cleanUpBroker(SHARED_BROKER.url, prefix, [clientId]));
    const collector: Collector = startCollector(validateMqttSettings({ url: SHARED_BROKER.url, topicPrefix: prefix, clientId }, { role: 'collector' }), { store: sqliteCollectorStore(target.store), backoff: FAST });
    cleanup.push(() => collector.stop());
    await waitUntil(() => collector.stats().subscribed, { what: 'the collector to subscribe', timeoutMs: 20_000, intervalMs: 20 });
    const publisher = sitePublisher(SHARED_BROKER.url, prefix, source);
    await waitUntil(() => publisher.stats().connected, { what: 'the site to connect', timeoutMs: 20_000, intervalMs: 20 });
    const batches = plannedBatches(20_000);
    await write(reportingStore(source.store, publisher), batches, Infinity);
    await waitUntil(confirmedAll(publisher), { what: 'the collector to confirm 20 000 samples', timeoutMs: 240_000, intervalMs: 100 });
    await collector.stop();
    expectExactlyOnce(source.store, target.store, 20_000);
    expect(collector.stats()).toMatchObject({ samplesStored: 20_000, conflicts: 0, rejected: 0, samplesMissing: 0 });
  });
});

describe.skipIf(!mosquittoInstalled)('collection through a restarted Mosquitto loses nothing', () => {
  it('broker stopped and started again (clean shutdown), then killed with SIGKILL and started again', { timeout: 300_000 }, async () => {
    const broker: OwnBroker = await ownMosquitto();
    cleanup.push(() => broker.remove());
    await broker.start();
    const prefix = testPrefix('restart');
    const source = sourceStore();
    const target = tempStore({ timeZone: 'Europe/Berlin' });
    cleanup.push(() => source.cleanup(), () => target.cleanup());
    const collector = startCollector(validateMqttSettings({ url: broker.url, topicPrefix: prefix, clientId: 'restart-collector' }, { role: 'collector' }), { store: sqliteCollectorStore(target.store), backoff: FAST });
    cleanup.push(() => collector.stop());
    await waitUntil(() => collector.stats().subscribed, { what: 'the collector to subscribe', timeoutMs: 20_000, intervalMs: 20 });
    const publisher = sitePublisher(broker.url, prefix, source);
    await waitUntil(() => publisher.stats().connected, { what: 'the site to connect', timeoutMs: 20_000, intervalMs: 20 });

    const batches = plannedBatches(150 * 20);
    const n = batches.flat().length;
    const writing = write(reportingStore(source.store, publisher), batches, 150);
    const pause = (ms: number) => new Promise((done) => setTimeout(done, ms));
    await pause(3000);
    await broker.stop(); // SIGTERM: Mosquitto saves sessions, queues and retained messages
    await pause(3000);
    await broker.start();
    await pause(4000);
    // SIGKILL: whatever Mosquitto held in memory is gone (no autosave) — the sites' databases still have it.
    await broker.kill();
    await broker.start();
    await writing;
    await waitUntil(confirmedAll(publisher), { what: `the collector to confirm all ${n} samples`, timeoutMs: 180_000, intervalMs: 100 });
    await collector.stop();
    expectExactlyOnce(source.store, target.store, n);
    expect(collector.stats()).toMatchObject({ conflicts: 0, rejected: 0, samplesMissing: 0 });
  });
});

describe.skipIf(!mosquittoInstalled)('collection through bridged Mosquitto brokers loses nothing', () => {
  it('site broker bridged to a central broker (the README configuration); the central broker restarted meanwhile', { timeout: 300_000 }, async () => {
    const central: OwnBroker = await ownMosquitto();
    cleanup.push(() => central.remove());
    await central.start();
    const prefix = testPrefix('bridge');
    // The bridge section of the README, pointed at the central broker of this test.
    const siteBroker: OwnBroker = await ownMosquitto([
      'connection central',
      `address 127.0.0.1:${central.port}`,
      `remote_clientid bridge-${SITE}-${process.pid}`,
      'cleansession false',
      'bridge_protocol_version mqttv311',
      'restart_timeout 1',
      `topic ${prefix}/${SITE}/status out 1`,
      `topic ${prefix}/${SITE}/+/+/state out 1`,
      `topic ${prefix}/${SITE}/+/+/samples out 1`,
      `topic ${prefix}/${SITE}/+/events out 1`,
      `topic ${prefix}/${SITE}/+/ack in 1`,
    ]);
    cleanup.push(() => siteBroker.remove());
    await siteBroker.start();
    const source = sourceStore();
    const target = tempStore({ timeZone: 'Europe/Berlin' });
    cleanup.push(() => source.cleanup(), () => target.cleanup());
    const collector = startCollector(validateMqttSettings({ url: central.url, topicPrefix: prefix, clientId: 'central-collector' }, { role: 'collector' }), { store: sqliteCollectorStore(target.store), backoff: FAST });
    cleanup.push(() => collector.stop());
    await waitUntil(() => collector.stats().subscribed, { what: 'the collector to subscribe', timeoutMs: 20_000, intervalMs: 20 });
    const publisher = sitePublisher(siteBroker.url, prefix, source);
    await waitUntil(() => publisher.stats().connected, { what: 'the site to connect', timeoutMs: 20_000, intervalMs: 20 });
    const batches = plannedBatches(150 * 15);
    const n = batches.flat().length;
    const writing = write(reportingStore(source.store, publisher), batches, 150);
    await new Promise((done) => setTimeout(done, 4000));
    await central.kill(); // the uplink's far end goes away without saving anything
    await new Promise((done) => setTimeout(done, 3000));
    await central.start();
    await writing;
    await waitUntil(confirmedAll(publisher), { what: `the collector to confirm all ${n} samples through the bridge`, timeoutMs: 180_000, intervalMs: 100 });
    await collector.stop();
    expectExactlyOnce(source.store, target.store, n);
    expect(collector.stats()).toMatchObject({ conflicts: 0, rejected: 0, samplesMissing: 0 });
  });
});

