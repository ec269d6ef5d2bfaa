import { hourlyRows, writeHourlyCsv } from '../../../src/outputs/hourlyCsv.ts';
import { createMqttPublisher, type MqttPublisher, type MqttPublisherOptions } from '../../../src/outputs/mqtt/mqttPublisher.ts';
import { startCollector, type Collector, type CollectorOptions } from '../../../src/outputs/mqtt/mqttCollector.ts';
import { sqliteCollectorStore } from '../../../src/store/collectorStore.ts';
import { validateMqttSettings } from '../../../src/outputs/mqtt/mqttSettings.ts';
import type { Sample, Store } from '../../../src/store/index.ts';
import { mulberry } from '../../helpers/random.ts';
import { waitUntil } from '../../service/waitUntil.ts';
import { HALF, tempStore, type TempStore } from '../../store/tempStore.ts';
import { startBroker, type TestBroker } from './broker.ts';

export const SITE = 'riverside';
export const TIME_ZONE = 'Europe/Berlin';
/** When the source's cameras and zones were set up: 2026-03-02 07:00 local (06:00 UTC). */
export const CREATED = Date.UTC(2026, 2, 2, 6, 0);
const START = Date.UTC(2026, 2, 2, 7, 0);
const STEP = 30_000;

/** Fast retries for tests on the loopback broker. */
export const FAST = { initialMs: 20, maxMs: 200 } as const;

/** The counting site's database: camera door (room zones entrance with capacity 10, tables) and camera stacks (shelf zone returns). */
export function sourceStore(): TempStore {
  const t = tempStore({ timeZone: TIME_ZONE });
  t.store.upsertCamera({ id: 'door', name: 'Front door' }, { time: CREATED });
  t.store.upsertZone('door', { id: 'entrance', kind: 'room', polygon: HALF, capacity: 10 }, { time: CREATED });
  t.store.upsertZone('door', { id: 'tables', kind: 'room', polygon: HALF }, { time: CREATED });
  t.store.upsertCamera({ id: 'stacks', name: 'Stacks' }, { time: CREATED });
  t.store.upsertZone('stacks', { id: 'returns', kind: 'shelf', polygon: HALF }, { time: CREATED });
  return t;
}

export const ZONES = [
  ['door', 'entrance'],
  ['door', 'tables'],
  ['stacks', 'returns'],
] as const;

/**
 * Invented samples, grouped per sampling instant as the pipeline writes them: every 30 s from
 * 07:00 to 12:00 UTC, none from 09:10 to 11:00 (an outage: local hour 11:00 has no data at all),
 * every seventh interval only 20 s long, a stretch flagged "view changed", smoothed counts with
 * two decimals and fills with four.
 */
export function inventedBatches(seed = 1): Sample[][] {
  const random = mulberry(seed);
  const batches: Sample[][] = [];
  for (let t = START + STEP, i = 0; t <= START + 5 * 3_600_000; t += STEP, i++) {
    if (t > Date.UTC(2026, 2, 2, 9, 10) && t <= Date.UTC(2026, 2, 2, 11, 0)) continue;
    const intervalMs = i % 7 === 0 ? 20_000 : STEP;
    const quality = t > Date.UTC(2026, 2, 2, 8, 0) && t <= Date.UTC(2026, 2, 2, 8, 5) ? 1 : 0;
    batches.push(
      ZONES.map(([camera, zone]) =>
        zone === 'returns'
          ? { time: t, camera, zone, kind: 'fill' as const, value: Math.round(random() * 10_000) / 10_000, intervalMs, quality }
          : { time: t, camera, zone, kind: 'count' as const, value: Math.round(random() * 1200) / 100, intervalMs, quality },
      ),
    );
  }
  return batches;
}

/** A zone's samples with the camera id put back to the source's. */
export function samplesOf(store: Store, camera: string, zone: string, as = camera) {
  return store.listSamples({ camera, zone }).map((s) => ({ ...s, camera: as }));
}

/** The hourly CSV of the day, by ids. */
export function dayCsv(store: Store): string {
  return writeHourlyCsv(hourlyRows(store, { from: '2026-03-02', to: '2026-03-02', timeZone: TIME_ZONE }));
}

/** A broker, a collector on a fresh database (subscribed), and a publisher (connected). */
export interface Rig {
  readonly broker: TestBroker;
  readonly target: TempStore;
  readonly collector: Collector;
  readonly publisher: MqttPublisher;
  readonly log: string[];
  close(): Promise<void>;
}

export async function startRig(options: { mqtt?: Record<string, unknown>; publisher?: Partial<MqttPublisherOptions>; collector?: Partial<CollectorOptions> } = {}): Promise<Rig> {
  const broker = await startBroker();
  const settings = validateMqttSettings({ url: broker.url, stateIntervalSeconds: 0, ...options.mqtt });
  const collectorSettings = validateMqttSettings({ url: broker.url, clientId: 'test-collector' }, { role: 'collector' });
  const target = tempStore({ timeZone: TIME_ZONE });
  const log: string[] = [];
  const collector = startCollector(collectorSettings, { store: sqliteCollectorStore(target.store), log: (l) => log.push(`collector ${l}`), backoff: FAST, ...options.collector });
  await waitUntil(() => collector.stats().subscribed, { what: 'the collector to subscribe', timeoutMs: 20_000, intervalMs: 20 });
  const publisher = createMqttPublisher(settings, { site: SITE, log: (l) => log.push(`publisher ${l}`), backoff: FAST, ...options.publisher });
  await waitUntil(() => publisher.stats().connected, { what: 'the publisher to connect', timeoutMs: 20_000, intervalMs: 20 });
  return {
    broker,
    target,
    collector,
    publisher,
    log,
    async close() {
      await publisher.stop();
      await collector.stop();
      await broker.close();
      target.cleanup();
    },
  };
}
