import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { exportCommand } from '../../../src/commands/export.ts';
import { hourlyRows, writeHourlyCsv } from '../../../src/outputs/hourlyCsv.ts';
import { sqliteCollectorStore, type CollectorStore } from '../../../src/store/collectorStore.ts';
import { openPostgresStore, type PostgresStore } from '../../../src/store/postgres/openPostgresStore.ts';
import type { Sample } from '../../../src/store/index.ts';
import { HALF, tempStore, type TempStore } from '../tempStore.ts';
import { CREATED, inventedBatches, TIME_ZONE, ZONES } from '../../outputs/mqtt/fixtures.ts';
import { pgAvailable, testDatabase } from './pgTestDatabase.ts';

let cleanup: (() => unknown)[] = [];
afterEach(async () => {
  for (const step of cleanup.reverse()) await step();
  cleanup = [];
});

async function stores(): Promise<{ pg: PostgresStore; lite: CollectorStore; sqlite: TempStore; url: string }> {
  const db = await testDatabase();
  cleanup.push(() => db.drop());
  const pg = openPostgresStore(db.url, { timeZone: TIME_ZONE });
  cleanup.push(() => pg.close());
  const sqlite = tempStore({ timeZone: TIME_ZONE });
  cleanup.push(() => sqlite.cleanup());
  for (const s of [pg, sqliteCollectorStore(sqlite.store)]) {
    s.upsertCamera({ id: 'door', name: 'Front door' }, { time: CREATED });
    s.upsertZone('door', { id: 'entrance', kind: 'room', polygon: HALF, capacity: 10 }, { time: CREATED });
    s.upsertZone('door', { id: 'tables', kind: 'room', polygon: HALF }, { time: CREATED });
    s.upsertCamera({ id: 'stacks', name: 'Stacks' }, { time: CREATED });
    s.upsertZone('stacks', { id: 'returns', kind: 'shelf', polygon: HALF }, { time: CREATED });
  }
  return { pg, lite: sqliteCollectorStore(sqlite.store), sqlite, url: db.url };
}

const dayCsv = (s: CollectorStore) => writeHourlyCsv(hourlyRows(s, { from: '2026-03-02', to: '2026-03-02', timeZone: TIME_ZONE }));

describe.skipIf(!pgAvailable)('PostgreSQL central store', () => {
  it('gives the same rollups, bucket for bucket, and the same hourly CSV as SQLite for the same samples', async () => {
    const { pg, lite } = await stores();
    const batches = inventedBatches(7);
    // Values whose micro-units end in exactly .5 (2.5e-6 × 10⁶ = 2.5): SQLite rounds half away from
    // zero, PostgreSQL's round(float8) to even — the store must follow SQLite.
    // check: SQLite round() documentation (https://www.sqlite.org/lang_corefunc.html#round), half away from zero (recalled from memory).
    batches[3] = batches[3].map((s) => (s.kind === 'count' ? { ...s, value: 2.5e-6 } : { ...s, value: 0.5 + 1.5e-6 }));
    for (const b of batches) {
      expect(pg.storeSamples(b).every((o) => o.outcome === 'stored')).toBe(true);
      expect(lite.storeSamples(b).every((o) => o.outcome === 'stored')).toBe(true);
    }
    expect(pg.listRollups()).toEqual(lite.listRollups());
    const csv = dayCsv(lite);
    expect(csv.split('\r\n').length).toBe(1 + 17 * 3 + 1);
    expect(dayCsv(pg)).toBe(csv);
    for (const [camera, zone] of ZONES) expect(pg.listSamples({ camera, zone })).toEqual(lite.listSamples({ camera, zone }));
    // Partitions: one per UTC day with samples (all on 2026-03-02).
    expect(pg.listPartitions()).toEqual([`samples_d${Math.floor(Date.UTC(2026, 2, 2) / 86_400_000)}`]);
  });

  it('judges duplicates and conflicts as the SQLite store does, within a batch and against stored samples', async () => {
    const { pg, lite } = await stores();
    const t = Date.UTC(2026, 2, 2, 8, 0);
    const base = { camera: 'door', zone: 'entrance', kind: 'count' as const, intervalMs: 30_000, quality: 0 };
    const first: Sample[] = [
      { ...base, time: t, value: 3 },
      { ...base, time: t + 30_000, value: 4 },
    ];
    const second: Sample[] = [
      { ...base, time: t, value: 3 }, // the same: duplicate
      { ...base, time: t, value: 5 }, // same interval, other value: conflict
      { ...base, time: t + 10_000, value: 3 }, // overlaps [t − 20 s, t): conflict
      { ...base, time: t - 60_000, value: 1 }, // older, overlaps nothing: stored
      { ...base, time: t - 50_000, value: 1 }, // overlaps the one before in the same batch: conflict with it
      { ...base, time: t - 60_000, value: 1 }, // the same as two before: duplicate
      { ...base, time: t - 30_000, value: 2, quality: 1 }, // ends where a stored one starts: stored
    ];
    for (const s of [pg, lite]) s.storeSamples(first);
    const outcomes = (s: CollectorStore) => s.storeSamples(second).map((o) => (o.outcome === 'conflict' ? `conflict with ${o.stored.time - t}` : o.outcome));
    const fromPg = outcomes(pg);
    // check: the SQLite store's own overlap rule (samples.ts) is the reference.
    expect(fromPg).toEqual(outcomes(lite));
    expect(fromPg).toEqual(['duplicate', 'conflict with 0', 'conflict with 0', 'stored', 'conflict with -60000', 'duplicate', 'stored']);
    expect(pg.listSamples({ camera: 'door', zone: 'entrance' })).toEqual(lite.listSamples({ camera: 'door', zone: 'entrance' }));
    expect(pg.listRollups()).toEqual(lite.listRollups());
  });

  it('retention drops whole day partitions; rollups stay; the horizon is the first day kept', async () => {
    const { pg } = await stores();
    const day = 86_400_000;
    const d0 = Date.UTC(2026, 2, 1);
    const samples: Sample[] = [0, 1, 2].flatMap((k) => [10_000, 3_600_000].map((off) => ({ camera: 'door', zone: 'tables', kind: 'count' as const, value: k + 1, intervalMs: 10_000, time: d0 + k * day + off })));
    pg.storeSamples(samples);
    expect(pg.listPartitions().length).toBe(3);
    const rollupsBefore = pg.listRollups();
    // 31 days after the middle of day 1: day 0 is entirely older than 30 days, day 1 not.
    const result = pg.applyRetention({ sampleDays: 30, now: d0 + day + day / 2 + 30 * day });
    expect(result).toMatchObject({ deleted: 2, cutoff: d0 + day });
    expect(pg.listPartitions().length).toBe(2);
    expect(pg.samplesPrunedBefore()).toBe(d0 + day);
    expect(pg.listSamples({ camera: 'door', zone: 'tables' }).map((s) => s.value)).toEqual([2, 2, 3, 3]);
    expect(pg.listRollups()).toEqual(rollupsBefore);
  });

  it('residuum export --config exports the same CSV from PostgreSQL as --db from SQLite; a second open migrates nothing', async () => {
    const { pg, lite, sqlite, url } = await stores();
    for (const b of inventedBatches(9)) {
      pg.storeSamples(b);
      lite.storeSamples(b);
    }
    const again = openPostgresStore(url);
    expect(again.timeZone).toBe(TIME_ZONE);
    again.close();
    const dir = mkdtempSync(join(tmpdir(), 'residuum-export-'));
    cleanup.push(() => rmSync(dir, { recursive: true, force: true }));
    const config = join(dir, 'collect.yaml');
    writeFileSync(config, `site: { name: Head office, timeZone: ${TIME_ZONE} }\nstorage: { url: "${url}" }\nmqtt: { url: "mqtt://127.0.0.1:1883" }\n`);
    await exportCommand(['--config', config, '--from', '2026-03-02', '--to', '2026-03-02', '--out', join(dir, 'pg.csv')]);
    await exportCommand(['--db', sqlite.file, '--from', '2026-03-02', '--to', '2026-03-02', '--out', join(dir, 'lite.csv')]);
    const text = readFileSync(join(dir, 'pg.csv'), 'utf8');
    expect(text.split('\r\n').length).toBe(1 + 17 * 3 + 1);
    expect(text).toBe(readFileSync(join(dir, 'lite.csv'), 'utf8'));
  });

  it('refuses a sample of an unknown zone or of the wrong kind, naming it, and writes nothing of the batch', async () => {
    const { pg } = await stores();
    const ok = { camera: 'door', zone: 'tables', kind: 'count' as const, value: 1, intervalMs: 1000, time: Date.UTC(2026, 2, 2, 9) };
    expect(() => pg.storeSamples([ok, { ...ok, zone: 'nowhere' }])).toThrow(/no zone 'nowhere' on camera 'door'/);
    expect(() => pg.storeSamples([ok, { ...ok, camera: 'stacks', zone: 'returns' }])).toThrow(/shelf zone and takes 'fill' samples/);
    expect(pg.listSamples({ camera: 'door', zone: 'tables' })).toEqual([]);
  });
});
