import { BUCKET_MS, MAX_INTERVAL_MS } from '../rollups.ts';

/**
 * The PostgreSQL schema of the central store, as ordered migrations (the version is kept in
 * `residuum_schema`). The tables are the SQLite store's (src/store/schema.ts) for what a collector
 * keeps — no models — with `samples` partitioned by day of `time` (UTC epoch ms).
 */
export interface PostgresMigration {
  readonly version: number;
  readonly description: string;
  readonly up: string;
}

/** Length of one samples partition: a UTC day, ms. */
export const PARTITION_MS = 86_400_000;

/** The partition holding UTC day `day` (days since 1970-01-01): `samples_d20514`. */
export function partitionName(day: number): string {
  if (!(Number.isInteger(day) && day >= 0)) throw new RangeError(`day: expected a whole number ≥ 0, got ${day}`);
  return `samples_d${day}`;
}

export const postgresMigrations: readonly PostgresMigration[] = [
  {
    version: 1,
    description: 'cameras, zones, zone history, samples partitioned by day, quarter-hour rollups, events, settings',
    up: `
      CREATE TABLE cameras (
        id      text   NOT NULL PRIMARY KEY,
        name    text   NOT NULL,
        created bigint NOT NULL
      );
      CREATE TABLE zones (
        camera   text   NOT NULL REFERENCES cameras (id),
        id       text   NOT NULL,
        kind     text   NOT NULL CHECK (kind IN ('room', 'shelf')),
        settings text   NOT NULL,
        created  bigint NOT NULL,
        updated  bigint NOT NULL,
        removed  bigint,
        PRIMARY KEY (camera, id)
      );
      CREATE TABLE zone_history (
        id        bigserial PRIMARY KEY,
        time      bigint NOT NULL,
        camera    text   NOT NULL,
        zone      text   NOT NULL,
        field     text   NOT NULL,
        old_value text,
        new_value text,
        FOREIGN KEY (camera, zone) REFERENCES zones (camera, id)
      );
      CREATE INDEX zone_history_by_zone ON zone_history (camera, zone, time);
      -- A sample at time t covers [t - interval_ms, t). Partitions: one per UTC day (created on demand).
      CREATE TABLE samples (
        camera      text    NOT NULL,
        zone        text    NOT NULL,
        time        bigint  NOT NULL,
        interval_ms integer NOT NULL CHECK (interval_ms BETWEEN 1 AND ${MAX_INTERVAL_MS} AND interval_ms <= time),
        value       double precision NOT NULL,
        kind        text    NOT NULL CHECK (kind IN ('count', 'fill')),
        quality     integer NOT NULL DEFAULT 0 CHECK (quality >= 0),
        PRIMARY KEY (camera, zone, time)
      ) PARTITION BY RANGE (time);
      CREATE TABLE rollups (
        camera       text   NOT NULL,
        zone         text   NOT NULL,
        bucket_start bigint NOT NULL CHECK (bucket_start % ${BUCKET_MS} = 0),
        samples      bigint NOT NULL,
        weighted_sum bigint NOT NULL,
        value_min    double precision NOT NULL,
        value_max    double precision NOT NULL,
        occupied_ms  bigint NOT NULL,
        flagged_ms   bigint NOT NULL,
        covered_ms   bigint NOT NULL CHECK (covered_ms BETWEEN 1 AND ${BUCKET_MS}),
        PRIMARY KEY (camera, zone, bucket_start)
      );
      CREATE INDEX rollups_by_bucket ON rollups (bucket_start);
      CREATE TABLE events (
        id     bigserial PRIMARY KEY,
        time   bigint NOT NULL,
        camera text   NOT NULL REFERENCES cameras (id),
        zone   text,
        type   text   NOT NULL,
        detail text   NOT NULL
      );
      CREATE INDEX events_by_time ON events (time);
      CREATE TABLE settings (
        key     text   NOT NULL PRIMARY KEY,
        value   text   NOT NULL,
        updated bigint NOT NULL
      );
    `,
  },
];
