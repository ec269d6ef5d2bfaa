/**
 * `npm run bench:collect`: how many samples a second `residuum collect` stores into PostgreSQL.
 *
 * 1. Store only: batches of `--batch` samples (default 1000) straight into the PostgreSQL store
 *    (`storeSamples`: overlap check, insert, rollups, one statement per batch).
 * 2. End to end: `--sites` sites (default 20, three zones each), each with its own SQLite
 *    database and MQTT publisher, write `--rate` samples a second in total (default 1000) for
 *    `--seconds` (default 30) through Mosquitto (127.0.0.1:1883) to one collector writing to
 *    PostgreSQL; then waits until every site has the collector's confirmation of every sample.
 *    Reports the rate the collector stored at while the sites wrote, and whether it kept up
 *    (the backlog at the end of writing and how long it took to clear).
 *
 * Everything runs in this one process (sites, publishers, collector), on a shared machine:
 * compare runs made on the same, otherwise idle machine. Needs PostgreSQL at 127.0.0.1:5432
 * (creates and drops a database of its own) and Mosquitto at 127.0.0.1:1883 (its own topic prefix).
 * `-- --json` prints one JSON object.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { parseArgs } from 'node:util';
import pg from 'pg';
import { startCollector } from '../src/outputs/mqtt/mqttCollector.ts';
import { createMqttPublisher, type MqttPublisher } from '../src/outputs/mqtt/mqttPublisher.ts';
import { validateMqttSettings } from '../src/outputs/mqtt/mqttSettings.ts';
import { reportingStore } from '../src/store/reportingStore.ts';
import { openStore, type Sample, type Store } from '../src/store/index.ts';
import { openPostgresStore } from '../src/store/postgres/openPostgresStore.ts';

const { values } = parseArgs({
  options: {
    sites: { type: 'string', default: '20' },
    rate: { type: 'string', default: '1000' },
    seconds: { type: 'string', default: '30' },
    batch: { type: 'string', default: '1000' },
    json: { type: 'boolean', default: false },
  },
});
const sites = Number(values.sites);
const rate = Number(values.rate);
const seconds = Number(values.seconds);
const batchSize = Number(values.batch);
const ZONES = ['entrance', 'tables', 'stacks'] as const;
const ADMIN = 'postgres://postgres@127.0.0.1:5432/postgres';
const say = (line: string) => {
  if (!values.json) console.log(line);
};

async function withDatabase<T>(run: (url: string) => Promise<T>): Promise<T> {
  const name = `residuum_bench_${process.pid}`;
  const admin = new pg.Client({ connectionString: ADMIN });
  await admin.connect();
  await admin.query(`CREATE DATABASE ${name}`);
  try {
    return await run(`postgres://postgres@127.0.0.1:5432/${name}`);
  } finally {
    await admin.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
    await admin.end();
  }
}

const start = Math.floor(Date.now() / 60_000) * 60_000 - 7_200_000;
const sample = (camera: string, zone: string, i: number): Sample => ({ camera, zone, time: start + (i + 1) * 1000, intervalMs: 1000, kind: 'count', value: (i % 17) / 4 });

async function storeOnly(url: string): Promise<number> {
  const store = openPostgresStore(url, { timeZone: 'UTC' });
  try {
    const cameras = 20;
    for (let c = 0; c < cameras; c++) {
      store.upsertCamera({ id: `cam${c}` });
      for (const z of ZONES) store.upsertZone(`cam${c}`, { id: z, kind: 'room', polygon: [[0, 0], [1, 0], [1, 1]] });
    }
    const total = 60_000;
    const all: Sample[] = [];
    for (let i = 0; all.length < total; i++) for (let c = 0; c < cameras; c++) for (const z of ZONES) all.push(sample(`cam${c}`, z, i));
    const t0 = performance.now();
    for (let k = 0; k < all.length; k += batchSize) store.storeSamples(all.slice(k, k + batchSize));
    const perSecond = all.length / ((performance.now() - t0) / 1000);
    say(`store only: ${all.length} samples in batches of ${batchSize}: ${Math.round(perSecond)} samples/s`);
    return perSecond;
  } finally {
    store.close();
  }
}

async function endToEnd(url: string) {
  const prefix = `residuum-bench/${process.pid}`;
  const central = openPostgresStore(url, { timeZone: 'UTC' });
  const collector = startCollector(validateMqttSettings({ url: 'mqtt://127.0.0.1:1883', topicPrefix: prefix, clientId: `residuum-bench-${process.pid}` }, { role: 'collector' }), { store: central, batchSize });
  const dir = mkdtempSync(join(tmpdir(), 'residuum-bench-collect-'));
  const site: { store: Store; writer: Store; publisher: MqttPublisher }[] = [];
  try {
    while (!collector.stats().subscribed) await new Promise((done) => setTimeout(done, 20));
    for (let s = 0; s < sites; s++) {
      const store = openStore(join(dir, `site${s}.db`), { timeZone: 'UTC' });
      store.upsertCamera({ id: 'door' });
      for (const z of ZONES) store.upsertZone('door', { id: z, kind: 'room', polygon: [[0, 0], [1, 0], [1, 1]] });
      const publisher = createMqttPublisher(validateMqttSettings({ url: 'mqtt://127.0.0.1:1883', topicPrefix: prefix, stateIntervalSeconds: 0 }), { site: `site${s}`, store });
      site.push({ store, writer: reportingStore(store, publisher), publisher });
    }
    while (!site.every((x) => x.publisher.stats().connected)) await new Promise((done) => setTimeout(done, 20));
    // One batch (three zones) per site and tick; ticks spaced to give `rate` samples a second in all.
    const perTick = sites * ZONES.length;
    const ticks = Math.round((rate * seconds) / perTick);
    const tickMs = (perTick / rate) * 1000;
    const total = ticks * perTick;
    const t0 = performance.now();
    for (let i = 0; i < ticks; i++) {
      for (const x of site) x.writer.insertSamples(ZONES.map((z) => sample('door', z, i)));
      const due = t0 + (i + 1) * tickMs;
      const wait = due - performance.now();
      await new Promise((done) => (wait > 0 ? setTimeout(done, wait) : setImmediate(done)));
    }
    const writing = (performance.now() - t0) / 1000;
    const storedWhileWriting = collector.stats().samplesStored;
    const backlog = total - storedWhileWriting;
    while (collector.stats().samplesStored < total || site.some((x) => x.publisher.stats().unconfirmedSamples > 0)) await new Promise((done) => setTimeout(done, 50));
    const done = (performance.now() - t0) / 1000;
    const stats = collector.stats();
    const result = {
      sites,
      targetRate: rate,
      seconds: writing,
      samples: total,
      storedWhileWriting,
      storedPerSecondWhileWriting: storedWhileWriting / writing,
      backlogAtEndOfWriting: backlog,
      secondsToConfirmAll: done,
      overallPerSecond: total / done,
      batches: stats.batches,
      duplicates: stats.duplicates,
      replays: site.reduce((n, x) => n + x.publisher.stats().replays, 0),
    };
    say(
      `end to end: ${sites} sites wrote ${total} samples at ${rate}/s for ${writing.toFixed(1)} s; the collector stored ${storedWhileWriting} meanwhile ` +
        `(${Math.round(result.storedPerSecondWhileWriting)}/s), ${backlog} behind at the end, all confirmed after ${done.toFixed(1)} s ` +
        `(${Math.round(result.overallPerSecond)}/s overall; ${stats.batches} batches, ${stats.duplicates} duplicates, ${result.replays} replays)`,
    );
    return result;
  } finally {
    for (const x of site) await x.publisher.stop();
    await collector.stop();
    central.close();
    for (const x of site) x.store.close();
    rmSync(dir, { recursive: true, force: true });
    // Retained acks and statuses under the bench prefix are left to expire with the broker's memory; clear them:
    const { cleanUpBroker } = await import('../test/outputs/mqtt/realBroker.ts');
    await cleanUpBroker('mqtt://127.0.0.1:1883', prefix, [`residuum-bench-${process.pid}`]);
  }
}

const out = await withDatabase(async (url) => ({ storeOnlyPerSecond: await storeOnly(url), endToEnd: await endToEnd(url) }));
if (values.json) console.log(JSON.stringify(out));
const kept = out.endToEnd.backlogAtEndOfWriting <= rate; // at most a second behind when the sites stopped
say(`target 1000 samples/s into PostgreSQL: ${out.endToEnd.storedPerSecondWhileWriting >= 0.95 * rate && kept ? 'met' : 'not met'}`);
process.exit(0);
