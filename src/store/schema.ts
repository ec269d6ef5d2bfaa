import type Database from 'better-sqlite3';
import { BUCKET_MS, MAX_INTERVAL_MS } from './rollups.ts';

/**
 * Schema and ordered migrations.
 *
 * The schema version lives in `PRAGMA user_version` (0 for a new, empty file). Migration N moves a
 * database from version N − 1 to N; {@link migrate} runs every migration above the current version
 * in order, each in its own `BEGIN IMMEDIATE` transaction together with the `user_version` bump, so
 * a crash mid-way leaves the file at the last complete version and two processes opening the same
 * new file do not both migrate it. Migrations are append-only: never edit one that has shipped.
 *
 * Times are UTC epoch milliseconds in INTEGER columns; JSON columns hold text checked by
 * `json_valid`. Tables are STRICT so a wrongly typed value is refused by SQLite itself.
 */
export interface Migration {
  /** Version the database has after this migration; 1, 2, 3… without gaps. */
  readonly version: number;
  /** One line on what it changes. */
  readonly description: string;
  /** SQL run with `db.exec` inside the migration's transaction. */
  readonly up: string;
}

export const migrations: readonly Migration[] = [
  {
    version: 1,
    description: 'cameras, zones, zone history, samples, quarter-hour rollups, models, events, settings',
    up: `
      CREATE TABLE cameras (
        id       TEXT    NOT NULL PRIMARY KEY,
        name     TEXT    NOT NULL,
        created  INTEGER NOT NULL
      ) STRICT, WITHOUT ROWID;

      -- Current settings of each zone; a removed zone keeps its row (samples refer to it).
      CREATE TABLE zones (
        camera   TEXT    NOT NULL REFERENCES cameras (id),
        id       TEXT    NOT NULL,
        kind     TEXT    NOT NULL CHECK (kind IN ('room', 'shelf')),
        settings TEXT    NOT NULL CHECK (json_valid(settings)),
        created  INTEGER NOT NULL,
        updated  INTEGER NOT NULL,
        removed  INTEGER,
        PRIMARY KEY (camera, id)
      ) STRICT, WITHOUT ROWID;

      -- One row per changed field: field '*' with old NULL = created, with new NULL = removed.
      CREATE TABLE zone_history (
        id        INTEGER NOT NULL PRIMARY KEY,
        time      INTEGER NOT NULL,
        camera    TEXT    NOT NULL,
        zone      TEXT    NOT NULL,
        field     TEXT    NOT NULL,
        old_value TEXT    CHECK (old_value IS NULL OR json_valid(old_value)),
        new_value TEXT    CHECK (new_value IS NULL OR json_valid(new_value)),
        FOREIGN KEY (camera, zone) REFERENCES zones (camera, id)
      ) STRICT;
      CREATE INDEX zone_history_by_zone ON zone_history (camera, zone, time);

      -- A sample at time t covers [t - interval_ms, t). No row = no data (an outage is never zeros).
      CREATE TABLE samples (
        camera      TEXT    NOT NULL,
        zone        TEXT    NOT NULL,
        time        INTEGER NOT NULL,
        interval_ms INTEGER NOT NULL CHECK (interval_ms BETWEEN 1 AND ${MAX_INTERVAL_MS} AND interval_ms <= time),
        value       REAL    NOT NULL,
        kind        TEXT    NOT NULL CHECK (kind IN ('count', 'fill')),
        quality     INTEGER NOT NULL DEFAULT 0 CHECK (quality >= 0),
        PRIMARY KEY (camera, zone, time),
        FOREIGN KEY (camera, zone) REFERENCES zones (camera, id)
      ) STRICT, WITHOUT ROWID;
      CREATE INDEX samples_by_time ON samples (time);

      -- Quarter-hour UTC buckets [bucket_start, bucket_start + ${BUCKET_MS}); see rollups.ts.
      CREATE TABLE rollups (
        camera       TEXT    NOT NULL,
        zone         TEXT    NOT NULL,
        bucket_start INTEGER NOT NULL CHECK (bucket_start % ${BUCKET_MS} = 0),
        samples      INTEGER NOT NULL,
        weighted_sum INTEGER NOT NULL,
        value_min    REAL    NOT NULL,
        value_max    REAL    NOT NULL,
        occupied_ms  INTEGER NOT NULL,
        flagged_ms   INTEGER NOT NULL,
        covered_ms   INTEGER NOT NULL CHECK (covered_ms BETWEEN 1 AND ${BUCKET_MS}),
        PRIMARY KEY (camera, zone, bucket_start),
        FOREIGN KEY (camera, zone) REFERENCES zones (camera, id)
      ) STRICT, WITHOUT ROWID;
      CREATE INDEX rollups_by_bucket ON rollups (bucket_start);

      -- Learned empty-scene models: the only image-like data kept (never a frame with people).
      CREATE TABLE models (
        id             INTEGER NOT NULL PRIMARY KEY,
        camera         TEXT    NOT NULL REFERENCES cameras (id),
        created        INTEGER NOT NULL,
        width          INTEGER NOT NULL CHECK (width > 0),
        height         INTEGER NOT NULL CHECK (height > 0),
        components     INTEGER NOT NULL CHECK (components >= 0),
        format_version INTEGER NOT NULL CHECK (format_version >= 1),
        data           BLOB    NOT NULL,
        metadata       TEXT    NOT NULL CHECK (json_valid(metadata))
      ) STRICT;
      CREATE INDEX models_by_camera ON models (camera, created);

      CREATE TABLE events (
        id      INTEGER NOT NULL PRIMARY KEY,
        time    INTEGER NOT NULL,
        camera  TEXT    NOT NULL REFERENCES cameras (id),
        zone    TEXT,
        type    TEXT    NOT NULL,
        detail  TEXT    NOT NULL CHECK (json_valid(detail)),
        FOREIGN KEY (camera, zone) REFERENCES zones (camera, id)
      ) STRICT;
      CREATE INDEX events_by_time ON events (time);
      CREATE INDEX events_by_camera ON events (camera, time);

      CREATE TABLE settings (
        key     TEXT    NOT NULL PRIMARY KEY,
        value   TEXT    NOT NULL CHECK (json_valid(value)),
        updated INTEGER NOT NULL
      ) STRICT, WITHOUT ROWID;
    `,
  },
  {
    version: 2,
    description: "models: rejected flag; cameras: the model in use (active_model), set to each camera's newest model",
    up: `
      -- A model learned but judged not usable (kept so that an admin may still choose it).
      ALTER TABLE models ADD COLUMN rejected INTEGER NOT NULL DEFAULT 0 CHECK (rejected IN (0, 1));
      -- The model the camera counts with. The foreign key keeps it from being deleted.
      ALTER TABLE cameras ADD COLUMN active_model INTEGER REFERENCES models (id);
      -- Until now a camera counted with its newest model.
      UPDATE cameras SET active_model = (
        SELECT m.id FROM models m WHERE m.camera = cameras.id ORDER BY m.created DESC, m.id DESC LIMIT 1
      );
    `,
  },
  {
    version: 3,
    description: 'samples: per-camera sequence numbers (seq), so that a collector can confirm what it holds; cameras.sample_seq: the last one given',
    up: `
      -- The last sequence number given to a sample of the camera (kept when samples are pruned).
      ALTER TABLE cameras ADD COLUMN sample_seq INTEGER NOT NULL DEFAULT 0;
      -- 1, 2, 3 … per camera in commit order; NULL for samples stored before this version.
      ALTER TABLE samples ADD COLUMN seq INTEGER;
      CREATE UNIQUE INDEX samples_by_seq ON samples (camera, seq) WHERE seq IS NOT NULL;
    `,
  },
  {
    version: 4,
    description: 'calibration points: people counted by hand in a room zone, with the numbers the camera measured then',
    up: `
      -- "There are N people in this zone now": the count given and the zone's count features at
      -- that moment (the blob rule's count, foreground area and edge in person sizes, blobs).
      -- Numbers only, never a frame. zone_shape identifies the zone's shape and settings the
      -- features were measured with; points of another shape are not used.
      CREATE TABLE calibration_points (
        id         INTEGER NOT NULL PRIMARY KEY,
        camera     TEXT    NOT NULL,
        zone       TEXT    NOT NULL,
        time       INTEGER NOT NULL,
        count      INTEGER NOT NULL CHECK (count BETWEEN 0 AND 100000),
        rule       REAL    NOT NULL,
        area       REAL    NOT NULL,
        edge       REAL    NOT NULL,
        blobs      REAL    NOT NULL,
        zone_shape TEXT    NOT NULL,
        given_by   TEXT    NOT NULL,
        FOREIGN KEY (camera, zone) REFERENCES zones (camera, id)
      ) STRICT;
      CREATE INDEX calibration_points_by_zone ON calibration_points (camera, zone, time);
    `,
  },
];

/** The version a database has after all {@link migrations}. */
export const SCHEMA_VERSION = migrations[migrations.length - 1].version;

/** Reads `PRAGMA user_version`. */
export function schemaVersion(db: Database.Database): number {
  return db.pragma('user_version', { simple: true }) as number;
}

/**
 * Brings `db` to {@link SCHEMA_VERSION}; returns the versions before and after. Throws when the
 * file was written by a newer program (its version is above ours): we do not guess at its schema.
 */
export function migrate(db: Database.Database, list: readonly Migration[] = migrations): { from: number; to: number } {
  list.forEach((m, i) => {
    if (m.version !== i + 1) throw new Error(`migrations[${i}].version: expected ${i + 1}, got ${m.version}`);
  });
  const latest = list.length;
  const from = schemaVersion(db);
  if (from > latest) {
    throw new Error(`database schema version ${from} is newer than this program's ${latest}; upgrade Residuum`);
  }
  for (const m of list) {
    const step = db.transaction(() => {
      // Re-read inside the write lock: another process may have migrated meanwhile.
      if (schemaVersion(db) >= m.version) return;
      db.exec(m.up);
      db.pragma(`user_version = ${m.version}`);
    });
    if (m.version > from) step.immediate();
  }
  return { from, to: schemaVersion(db) };
}
