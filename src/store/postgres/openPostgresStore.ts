import type { CollectorStore, SampleOutcome } from '../collectorStore.ts';
import { sameSample } from '../collectorStore.ts';
import type { CameraRecord } from '../cameras.ts';
import { EventType, type StoredEvent } from '../events.ts';
import { BUCKET_MS, MAX_INTERVAL_MS, VALUE_SCALE, type Rollup } from '../rollups.ts';
import { DEFAULT_RETENTION } from '../retention.ts';
import { validateSample, type Sample, type StoredSample } from '../samples.ts';
import { SettingKey } from '../settings.ts';
import { checkEpochMs, checkId, checkInt, checkNumber, checkOneOf, checkText, checkTimeZone, toJson } from '../validate.ts';
import { normaliseZone, type ZoneHistoryEntry, type ZoneRecord } from '../zones.ts';
import type { Zone } from '../../domain/zone.ts';
import { syncPg, type SyncPg } from './syncPg.ts';
import { postgresMigrations, PARTITION_MS, partitionName } from './postgresSchema.ts';

/**
 * The central store of `residuum collect` in PostgreSQL, chosen by `storage: { url:
 * "postgres://user@host:5432/db" }` in the collector's configuration. It keeps what the SQLite
 * store keeps for a collector — cameras, zones and their history, samples, quarter-hour rollups,
 * events, settings — with the same methods (synchronous, see syncPg.ts), so `residuum export` and
 * the read-only dashboard read it unchanged.
 *
 * - Schema: created and migrated at open (postgresSchema.ts), under an advisory lock so that two
 *   collectors starting together do not both migrate.
 * - Samples: partitioned by day of `time` (declarative range partitioning, PostgreSQL ≥ 10);
 *   each day's partition is created when its first sample comes. Retention drops whole
 *   partitions (no row-by-row DELETE, no vacuum debt): the horizon is the start of the oldest
 *   kept day, so samples are kept between `sampleRetentionDays` and one day longer.
 * - Batches: `storeSamples` writes a whole batch with one statement (arrays through `unnest`):
 *   overlap check against the stored samples, insert, and the rollups of what was inserted,
 *   atomically. Rollup arithmetic is the SQLite store's to the bit: `round(value × 10⁶)` as SQLite
 *   rounds (half away from zero: trunc(x + 0.5) for x ≥ 0, in double precision) times the
 *   overlap in ms, integer sums.
 */

export interface PostgresStoreOptions {
  /** The site's IANA zone (the export's default); default the stored one, else UTC. */
  readonly timeZone?: string;
  /** Clock for default timestamps, epoch ms; default Date.now. */
  readonly clock?: () => number;
}

export interface PostgresStore extends CollectorStore {
  /** The connection URL without its password (for messages). */
  readonly url: string;
  /** The names of the samples table's partitions, oldest first. */
  listPartitions(): string[];
  close(): void;
}

/** A postgres: URL with the password replaced by `***`, for messages. */
export function redactUrl(url: string): string {
  try {
    const u = new URL(url);
    if (u.password) u.password = '***';
    return u.toString();
  } catch {
    return 'postgres://…';
  }
}

export function openPostgresStore(url: string, options: PostgresStoreOptions = {}): PostgresStore {
  const { timeZone, clock = Date.now } = options;
  const shown = redactUrl(url);
  const pg = syncPg(url);
  try {
    migrate(pg);
    return prepare(pg, shown, timeZone === undefined ? undefined : checkTimeZone(timeZone, 'options.timeZone'), clock);
  } catch (error) {
    pg.close();
    throw new Error(`cannot open store ${shown}: ${(error as Error).message}`, { cause: error });
  }
}

function migrate(pg: SyncPg): void {
  pg.query("SELECT pg_advisory_lock(hashtext('residuum schema'))");
  try {
    pg.query('CREATE TABLE IF NOT EXISTS residuum_schema (version integer NOT NULL)');
    const rows = pg.query<{ version: number }>('SELECT version FROM residuum_schema').rows;
    let version = rows.length === 0 ? 0 : rows[0].version;
    if (rows.length === 0) pg.query('INSERT INTO residuum_schema (version) VALUES (0)');
    if (version > postgresMigrations.length) throw new Error(`database schema version ${version} is newer than this program's ${postgresMigrations.length}; upgrade Residuum`);
    for (const m of postgresMigrations.slice(version)) {
      pg.query('BEGIN');
      try {
        pg.query(m.up);
        pg.query('UPDATE residuum_schema SET version = $1', [m.version]);
        pg.query('COMMIT');
      } catch (error) {
        pg.query('ROLLBACK');
        throw error;
      }
      version = m.version;
    }
  } finally {
    pg.query("SELECT pg_advisory_unlock(hashtext('residuum schema'))");
  }
}

interface ZoneRow {
  camera: string;
  id: string;
  kind: string;
  settings: string;
  created: number;
  updated: number;
  removed: number | null;
}

const toZoneRecord = (r: ZoneRow): ZoneRecord => ({ camera: r.camera, zone: JSON.parse(r.settings) as Zone, created: r.created, updated: r.updated, removed: r.removed });
const parseOrNull = (text: string | null): unknown => (text === null ? null : JSON.parse(text));

const ZONE_FIELDS_ORDER = (zone: Zone) => Object.keys(zone);

function prepare(pg: SyncPg, url: string, zone: string | undefined, clock: () => number): PostgresStore {
  const partitions = new Set(pg.query<{ name: string }>("SELECT c.relname AS name FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid WHERE i.inhparent = 'samples'::regclass").rows.map((r) => r.name));

  function transaction<T>(run: () => T): T {
    pg.query('BEGIN');
    try {
      const out = run();
      pg.query('COMMIT');
      return out;
    } catch (error) {
      pg.query('ROLLBACK');
      throw error;
    }
  }

  function getSetting(key: string): unknown {
    const rows = pg.query<{ value: string }>('SELECT value FROM settings WHERE key = $1', [checkText(key, 'key')]).rows;
    return rows.length === 0 ? undefined : (JSON.parse(rows[0].value) as unknown);
  }
  function setSetting(key: string, value: unknown): void {
    pg.query('INSERT INTO settings (key, value, updated) VALUES ($1, $2, $3) ON CONFLICT (key) DO UPDATE SET value = excluded.value, updated = excluded.updated', [
      checkText(key, 'key'),
      toJson(value, `setting ${key}`),
      clock(),
    ]);
  }
  const stored = getSetting(SettingKey.timeZone);
  const site = zone ?? (typeof stored === 'string' ? checkTimeZone(stored, `settings ${SettingKey.timeZone}`) : 'UTC');
  if (stored !== site) setSetting(SettingKey.timeZone, site);

  function ensurePartitions(times: Iterable<number>): void {
    const days = new Set<number>();
    for (const t of times) days.add(Math.floor(t / PARTITION_MS));
    for (const day of days) {
      const name = partitionName(day);
      if (partitions.has(name)) continue;
      // IF NOT EXISTS: another collector may have made it meanwhile.
      pg.query(`CREATE TABLE IF NOT EXISTS ${name} PARTITION OF samples FOR VALUES FROM (${day * PARTITION_MS}) TO (${(day + 1) * PARTITION_MS})`);
      partitions.add(name);
    }
  }

  const getZone = (camera: string, id: string): ZoneRecord | undefined => {
    const rows = pg.query<ZoneRow>('SELECT camera, id, kind, settings, created, updated, removed FROM zones WHERE camera = $1 AND id = $2', [checkId(camera, 'camera'), checkId(id, 'id')]).rows;
    return rows.length === 0 ? undefined : toZoneRecord(rows[0]);
  };

  function horizon(): number {
    const v = getSetting(SettingKey.samplesPrunedBefore);
    return typeof v === 'number' ? v : 0;
  }

  const store: PostgresStore = {
    url,
    timeZone: site,
    getSetting,
    setSetting,
    listSettings() {
      return pg.query<{ key: string; value: string; updated: number }>('SELECT key, value, updated FROM settings ORDER BY key').rows.map((r) => ({ ...r, value: JSON.parse(r.value) as unknown }));
    },
    upsertCamera(camera, options = {}) {
      const { time = clock() } = options;
      const id = checkId(camera?.id, 'camera.id');
      const name = camera.name === undefined ? id : checkText(camera.name, 'camera.name');
      return pg.query<CameraRecord>('INSERT INTO cameras (id, name, created) VALUES ($1, $2, $3) ON CONFLICT (id) DO UPDATE SET name = excluded.name RETURNING id, name, created', [
        id,
        name,
        checkEpochMs(time, 'options.time'),
      ]).rows[0];
    },
    getCamera(id) {
      return pg.query<CameraRecord>('SELECT id, name, created FROM cameras WHERE id = $1', [checkId(id, 'id')]).rows[0];
    },
    listCameras() {
      return pg.query<CameraRecord>('SELECT id, name, created FROM cameras ORDER BY id COLLATE "C"').rows;
    },
    getZone,
    upsertZone(camera, input, options = {}) {
      const { time: t = clock() } = options;
      const cam = checkId(camera, 'camera');
      const z = normaliseZone(input);
      const time = checkEpochMs(t, 'options.time');
      return transaction(() => {
        if (pg.query('SELECT 1 FROM cameras WHERE id = $1', [cam]).rowCount === 0) throw new RangeError(`camera: no camera '${cam}'; add it with upsertCamera first`);
        const settings = JSON.stringify(z);
        const row = pg.query<ZoneRow>('SELECT camera, id, kind, settings, created, updated, removed FROM zones WHERE camera = $1 AND id = $2 FOR UPDATE', [cam, z.id]).rows[0];
        const entries: { field: string; old: string | null; new: string | null }[] = [];
        if (row === undefined) {
          pg.query('INSERT INTO zones (camera, id, kind, settings, created, updated, removed) VALUES ($1, $2, $3, $4, $5, $5, NULL)', [cam, z.id, z.kind, settings, time]);
          entries.push({ field: '*', old: null, new: settings });
        } else {
          if (row.kind !== z.kind) throw new RangeError(`zone.kind: zone '${cam}/${z.id}' is a ${row.kind} zone; use a new id for a ${z.kind} zone`);
          if (row.removed !== null) entries.push({ field: '*', old: null, new: settings });
          else {
            const before = JSON.parse(row.settings) as Record<string, unknown>;
            const after = z as unknown as Record<string, unknown>;
            for (const key of new Set([...Object.keys(before), ...ZONE_FIELDS_ORDER(z)])) {
              const o = before[key] === undefined ? null : JSON.stringify(before[key]);
              const n = after[key] === undefined ? null : JSON.stringify(after[key]);
              if (o !== n) entries.push({ field: key, old: o, new: n });
            }
          }
          if (entries.length > 0) pg.query('UPDATE zones SET settings = $3, updated = $4, removed = NULL WHERE camera = $1 AND id = $2', [cam, z.id, settings, time]);
        }
        for (const e of entries) pg.query('INSERT INTO zone_history (time, camera, zone, field, old_value, new_value) VALUES ($1, $2, $3, $4, $5, $6)', [time, cam, z.id, e.field, e.old, e.new]);
        return entries.map((e): ZoneHistoryEntry => ({ time, camera: cam, zone: z.id, field: e.field, old: parseOrNull(e.old), new: parseOrNull(e.new) }));
      });
    },
    listZones(query = {}) {
      const { camera, includeRemoved = false } = query;
      return pg
        .query<ZoneRow>(
          'SELECT camera, id, kind, settings, created, updated, removed FROM zones WHERE ($1::text IS NULL OR camera = $1) AND ($2 OR removed IS NULL) ORDER BY camera COLLATE "C", id COLLATE "C"',
          [camera === undefined ? null : checkId(camera, 'query.camera'), includeRemoved],
        )
        .rows.map(toZoneRecord);
    },
    zoneHistory(camera, id) {
      return pg
        .query<{ time: number; camera: string; zone: string; field: string; old_value: string | null; new_value: string | null }>(
          'SELECT time, camera, zone, field, old_value, new_value FROM zone_history WHERE camera = $1 AND ($2::text IS NULL OR zone = $2) ORDER BY time, id',
          [checkId(camera, 'camera'), id === undefined ? null : checkId(id, 'id')],
        )
        .rows.map((r) => ({ time: r.time, camera: r.camera, zone: r.zone, field: r.field, old: parseOrNull(r.old_value), new: parseOrNull(r.new_value) }));
    },
    storeSamples(input) {
      if (!Array.isArray(input)) throw new TypeError('samples: expected an array');
      const samples = input.map((s, i) => validateSample(s, `samples[${i}]`));
      const outcomes: (SampleOutcome | undefined)[] = new Array(samples.length);
      // Samples of the batch that overlap an earlier one of the batch are judged against it, as one by one.
      const accepted = new Map<string, StoredSample[]>();
      const rows: { s: StoredSample; ord: number }[] = [];
      samples.forEach((s, ord) => {
        const key = `${s.camera}\u0000${s.zone}`;
        const list = accepted.get(key) ?? [];
        const clash = list.find((x) => x.time === s.time) ?? list.find((x) => x.time > s.time - s.intervalMs && x.time - x.intervalMs < s.time);
        if (clash) outcomes[ord] = sameSample(clash, s) ? { outcome: 'duplicate' } : { outcome: 'conflict', stored: clash };
        else {
          list.push(s);
          accepted.set(key, list);
          rows.push({ s, ord });
        }
      });
      if (rows.length > 0) {
        const kinds = new Map(pg.query<{ camera: string; id: string; kind: string; removed: number | null }>(
          'SELECT camera, id, kind, removed FROM zones WHERE (camera, id) IN (SELECT * FROM unnest($1::text[], $2::text[]))',
          [rows.map((r) => r.s.camera), rows.map((r) => r.s.zone)],
        ).rows.map((z) => [`${z.camera}\u0000${z.id}`, z]));
        for (const { s } of rows) {
          const z = kinds.get(`${s.camera}\u0000${s.zone}`);
          if (z === undefined) throw new RangeError(`samples: no zone '${s.zone}' on camera '${s.camera}'; add it with upsertZone first`);
          if (z.removed !== null) throw new RangeError(`samples: zone '${s.camera}/${s.zone}' was removed`);
          if ((z.kind === 'room') !== (s.kind === 'count')) throw new RangeError(`samples: zone '${s.camera}/${s.zone}' is a ${z.kind} zone and takes '${z.kind === 'room' ? 'count' : 'fill'}' samples, got '${s.kind}'`);
        }
        ensurePartitions(rows.map((r) => r.s.time));
        const result = pg.query<{ what: string; ord: number; camera: string; zone: string; time: number; interval_ms: number; value: number; kind: 'count' | 'fill'; quality: number }>(STORE_BATCH, [
          rows.map((r) => r.s.camera),
          rows.map((r) => r.s.zone),
          rows.map((r) => r.s.time),
          rows.map((r) => r.s.intervalMs),
          rows.map((r) => r.s.value),
          rows.map((r) => r.s.kind),
          rows.map((r) => r.s.quality),
          rows.map((r) => r.ord),
        ]).rows;
        const inserted = new Set<string>();
        for (const r of result) {
          if (r.what === 'stored') inserted.add(`${r.camera}\u0000${r.zone}\u0000${r.time}`);
          else {
            const clash: StoredSample = { camera: r.camera, zone: r.zone, time: r.time, intervalMs: r.interval_ms, value: r.value, kind: r.kind, quality: r.quality };
            outcomes[r.ord] = sameSample(clash, samples[r.ord]) ? { outcome: 'duplicate' } : { outcome: 'conflict', stored: clash };
          }
        }
        for (const { s, ord } of rows) {
          if (outcomes[ord] !== undefined) continue;
          // Not inserted and no clash seen: another writer stored the same key between the check and the insert.
          outcomes[ord] = inserted.has(`${s.camera}\u0000${s.zone}\u0000${s.time}`) ? { outcome: 'stored' } : { outcome: 'duplicate' };
        }
      }
      return outcomes as SampleOutcome[];
    },
    listSamples(query) {
      const camera = checkId(query?.camera, 'query.camera');
      const zone = checkId(query?.zone, 'query.zone');
      const { from = 0, to = Number.MAX_SAFE_INTEGER } = query;
      return pg
        .query<{ camera: string; zone: string; time: number; interval_ms: number; value: number; kind: 'count' | 'fill'; quality: number }>(
          'SELECT camera, zone, time, interval_ms, value, kind, quality FROM samples WHERE camera = $1 AND zone = $2 AND time >= $3 AND time < $4 ORDER BY time',
          [camera, zone, from, to],
        )
        .rows.map((r) => ({ camera: r.camera, zone: r.zone, time: r.time, intervalMs: r.interval_ms, value: r.value, kind: r.kind, quality: r.quality }));
    },
    listRollups(query = {}) {
      const { from = 0, to = 9_000_000_000_000_000, camera = null, zone = null } = query;
      if (camera !== null) checkId(camera, 'query.camera');
      if (zone !== null) checkId(zone, 'query.zone');
      return pg
        .query<{ camera: string; zone: string; bucket_start: number; samples: number; weighted_sum: number; value_min: number; value_max: number; occupied_ms: number; flagged_ms: number; covered_ms: number }>(
          `SELECT camera, zone, bucket_start, samples, weighted_sum, value_min, value_max, occupied_ms, flagged_ms, covered_ms FROM rollups
           WHERE bucket_start >= $1 AND bucket_start < $2 AND ($3::text IS NULL OR camera = $3) AND ($4::text IS NULL OR zone = $4)
           ORDER BY camera COLLATE "C", zone COLLATE "C", bucket_start`,
          [from, to, camera, zone],
        )
        .rows.map(
          (r): Rollup => ({
            camera: r.camera,
            zone: r.zone,
            bucketStart: r.bucket_start,
            samples: r.samples,
            weightedSum: r.weighted_sum,
            min: r.value_min,
            max: r.value_max,
            occupiedMs: r.occupied_ms,
            flaggedMs: r.flagged_ms,
            coveredMs: r.covered_ms,
          }),
        );
    },
    insertEvent(event) {
      if (typeof event !== 'object' || event === null) throw new TypeError('event: expected an object');
      return pg.query<{ id: number }>('INSERT INTO events (time, camera, zone, type, detail) VALUES ($1, $2, $3, $4, $5) RETURNING id', [
        checkEpochMs(event.time ?? clock(), 'event.time'),
        checkId(event.camera, 'event.camera'),
        event.zone == null ? null : checkId(event.zone, 'event.zone'),
        checkOneOf(event.type, 'event.type', EventType),
        toJson(event.detail ?? {}, 'event.detail'),
      ]).rows[0].id;
    },
    listEvents(query = {}) {
      const { from = 0, to = Number.MAX_SAFE_INTEGER, camera, type, limit = 10_000 } = query;
      return pg
        .query<Omit<StoredEvent, 'detail'> & { detail: string }>(
          'SELECT id, time, camera, zone, type, detail FROM events WHERE time >= $1 AND time < $2 AND ($3::text IS NULL OR camera = $3) AND ($4::text IS NULL OR type = $4) ORDER BY time, id LIMIT $5',
          [from, to, camera === undefined ? null : checkId(camera, 'query.camera'), type === undefined ? null : checkOneOf(type, 'query.type', EventType), checkInt(limit, 'query.limit', 1, 1_000_000)],
        )
        .rows.map((r) => ({ ...r, detail: JSON.parse(r.detail) as unknown }));
    },
    applyRetention(policy = {}) {
      const { sampleDays = DEFAULT_RETENTION.sampleDays, rollupDays, now = clock() } = policy;
      const days = checkNumber(sampleDays, 'policy.sampleDays', 1, 1_000_000);
      const at = checkEpochMs(now, 'policy.now');
      // Whole days: the horizon is the start of the first partition kept.
      const cutoff = Math.floor(Math.max(0, at - Math.round(days * 86_400_000)) / PARTITION_MS) * PARTITION_MS;
      let deleted = 0;
      for (const name of store.listPartitions()) {
        const day = Number(name.slice(name.lastIndexOf('_d') + 2));
        if ((day + 1) * PARTITION_MS > cutoff) continue;
        deleted += Number(pg.query<{ n: number }>(`SELECT count(*)::bigint AS n FROM ${name}`).rows[0].n);
        pg.query(`DROP TABLE IF EXISTS ${name}`);
        partitions.delete(name);
      }
      if (cutoff > horizon()) setSetting(SettingKey.samplesPrunedBefore, cutoff);
      if (rollupDays === undefined) return { deleted, cutoff };
      const keep = checkNumber(rollupDays, 'policy.rollupDays', days, 1_000_000);
      const rollupCutoff = Math.floor(Math.max(0, at - Math.round(keep * 86_400_000)) / BUCKET_MS) * BUCKET_MS;
      return { deleted, cutoff, rollupsDeleted: pg.query('DELETE FROM rollups WHERE bucket_start < $1', [rollupCutoff]).rowCount };
    },
    samplesPrunedBefore: horizon,
    listPartitions() {
      return pg
        .query<{ name: string }>("SELECT c.relname AS name FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid WHERE i.inhparent = 'samples'::regclass ORDER BY c.relname")
        .rows.map((r) => r.name);
    },
    close: () => pg.close(),
  };
  return store;
}

/**
 * One batch: $1..$8 are the arrays camera, zone, time, interval_ms, value, kind, quality, ord
 * (the sample's place in the batch). Returns the stored samples each one overlaps (what =
 * 'clash', with its ord; the one with the same end first) and the samples inserted (what =
 * 'stored'); the rollups of the inserted ones are updated by the same statement.
 */
const STORE_BATCH = `
WITH input AS (
  SELECT * FROM unnest($1::text[], $2::text[], $3::bigint[], $4::integer[], $5::float8[], $6::text[], $7::integer[], $8::integer[])
    AS t(camera, zone, time, interval_ms, value, kind, quality, ord)
),
clash AS (
  -- A stored [t − i, t) overlaps [start, end) iff t > start and t − i < end; i ≤ ${MAX_INTERVAL_MS} bounds t.
  SELECT DISTINCT ON (i.ord) i.ord, s.camera, s.zone, s.time, s.interval_ms, s.value, s.kind, s.quality
  FROM input i JOIN samples s
    ON s.camera = i.camera AND s.zone = i.zone AND s.time > i.time - i.interval_ms
   AND s.time < i.time + ${MAX_INTERVAL_MS} AND s.time - s.interval_ms < i.time
  ORDER BY i.ord, (s.time = i.time) DESC, s.time
),
ins AS (
  INSERT INTO samples (camera, zone, time, interval_ms, value, kind, quality)
  SELECT camera, zone, time, interval_ms, value, kind, quality FROM input i
  WHERE NOT EXISTS (SELECT 1 FROM clash c WHERE c.ord = i.ord)
  ON CONFLICT DO NOTHING
  RETURNING camera, zone, time, interval_ms, value, kind, quality
),
pieces AS (
  SELECT camera, zone, b AS bucket_start,
         least(time, b + ${BUCKET_MS}) - greatest(time - interval_ms, b) AS overlap,
         ((time - 1) / ${BUCKET_MS} * ${BUCKET_MS} = b) AS ends, value, quality
  FROM ins, generate_series((time - interval_ms) / ${BUCKET_MS} * ${BUCKET_MS}, (time - 1) / ${BUCKET_MS} * ${BUCKET_MS}, ${BUCKET_MS}::bigint) AS b
),
roll AS (
  INSERT INTO rollups AS r (camera, zone, bucket_start, samples, weighted_sum, value_min, value_max, occupied_ms, flagged_ms, covered_ms)
  SELECT camera, zone, bucket_start, count(*) FILTER (WHERE ends),
         sum(trunc(value * ${VALUE_SCALE} + 0.5)::bigint * overlap)::bigint,
         min(value), max(value),
         sum(CASE WHEN value > 0 THEN overlap ELSE 0 END)::bigint,
         sum(CASE WHEN quality <> 0 THEN overlap ELSE 0 END)::bigint,
         sum(overlap)::bigint
  FROM pieces WHERE overlap > 0 GROUP BY camera, zone, bucket_start
  ON CONFLICT (camera, zone, bucket_start) DO UPDATE SET
    samples = r.samples + excluded.samples,
    weighted_sum = r.weighted_sum + excluded.weighted_sum,
    value_min = least(r.value_min, excluded.value_min),
    value_max = greatest(r.value_max, excluded.value_max),
    occupied_ms = r.occupied_ms + excluded.occupied_ms,
    flagged_ms = r.flagged_ms + excluded.flagged_ms,
    covered_ms = r.covered_ms + excluded.covered_ms
)
SELECT 'clash' AS what, ord, camera, zone, time, interval_ms, value, kind, quality FROM clash
UNION ALL
SELECT 'stored', NULL, camera, zone, time, interval_ms, value, kind, quality FROM ins`;
