import { closeSync, existsSync, mkdirSync, openSync } from 'node:fs';
import { dirname } from 'node:path';
import Database from 'better-sqlite3';
import { prepareCalibration, type CalibrationStore } from './calibration.ts';
import { prepareCameras, type CameraStore } from './cameras.ts';
import { prepareEvents, type EventStore } from './events.ts';
import { prepareModels, type ModelStore } from './models.ts';
import { prepareRetention, type RetentionStore } from './retention.ts';
import { prepareRollups, prepareRollupWriter, type RollupStore } from './rollups.ts';
import { prepareSamples, type SampleStore } from './samples.ts';
import { migrate } from './schema.ts';
import { prepareSequence, type SequenceStore } from './sequence.ts';
import { prepareSettings, SettingKey, type SettingStore } from './settings.ts';
import { checkInt, checkTimeZone } from './validate.ts';
import { prepareZones, type ZoneStore } from './zones.ts';

export interface OpenStoreOptions {
  /**
   * The site's IANA time zone (e.g. `Europe/Berlin`), normally from the configuration; it is
   * written to settings (`site.timeZone`) and is the export's default. Default: the zone stored
   * by the last open, else `UTC`. Rollups are UTC quarter hours, so changing it needs no rebuild.
   */
  readonly timeZone?: string;
  /** How long a write waits for another connection's lock before failing, ms; default 5000, 0..600 000 inclusive. */
  readonly busyTimeoutMs?: number;
  /** Clock for default timestamps (created, updated, event time), UTC epoch ms; default `Date.now`. */
  readonly clock?: () => number;
}

/** An open store: every table's methods, statements prepared once at open. */
export interface Store
  extends CameraStore, ZoneStore, SampleStore, SequenceStore, RollupStore, EventStore, ModelStore, SettingStore, RetentionStore, CalibrationStore {
  /** The database file. */
  readonly file: string;
  /** The site's IANA zone this store was opened with. */
  readonly timeZone: string;
  /** The underlying connection, for tests and maintenance; writes should go through the methods. */
  readonly db: Database.Database;
  /** Closes the connection (committed data is on disk or in the WAL). */
  close(): void;
}

/**
 * Opens (creating if needed) the SQLite store at `file` and brings its schema up to date.
 *
 * Connection settings: `journal_mode=WAL` (readers do not block the writer, e.g. an export while
 * the counter writes), `synchronous=NORMAL` (a committed transaction survives a process crash or
 * `kill -9`; only a power loss or OS crash can lose the last commits, never corrupt the file —
 * https://www.sqlite.org/pragma.html#pragma_synchronous), `foreign_keys=ON`, `busy_timeout`.
 * Each write method is its own transaction (batches: `insertSamples`), committed on return.
 *
 * ```ts
 * const store = openStore('data/residuum.db', { timeZone: 'Europe/Berlin' });
 * store.upsertCamera({ id: 'hall' });
 * store.upsertZone('hall', { id: 'entrance', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1]] });
 * store.insertSample({ time: Date.now(), camera: 'hall', zone: 'entrance', value: 3, kind: 'count', intervalMs: 5000 });
 * store.close();
 * ```
 */
export function openStore(file: string, options: OpenStoreOptions = {}): Store {
  const { timeZone, busyTimeoutMs = 5000, clock = Date.now } = options;
  if (typeof file !== 'string' || file.length === 0) throw new TypeError('file: expected a database file path');
  const busy = checkInt(busyTimeoutMs, 'options.busyTimeoutMs', 0, 600_000);
  if (typeof clock !== 'function') throw new TypeError('options.clock: expected a function returning epoch ms');
  const zone = timeZone === undefined ? undefined : checkTimeZone(timeZone, 'options.timeZone');

  const inMemory = file === ':memory:';
  let db: Database.Database;
  try {
    if (!inMemory) {
      // Counts of people are personal data in many places: a new folder and database are for
      // this user only (0700 and 0600; SQLite gives its -wal and -shm files the database's mode).
      mkdirSync(dirname(file), { recursive: true, mode: 0o700 });
      if (!existsSync(file)) closeSync(openSync(file, 'a', 0o600));
    }
    db = new Database(file);
  } catch (error) {
    throw new Error(`cannot open store ${file}: ${(error as Error).message}`, { cause: error });
  }
  try {
    const mode = db.pragma('journal_mode = WAL', { simple: true });
    if (!inMemory && mode !== 'wal') throw new Error(`journal_mode is '${String(mode)}', expected 'wal'`);
    db.pragma('synchronous = NORMAL');
    db.pragma('foreign_keys = ON');
    db.pragma(`busy_timeout = ${busy}`);
    migrate(db);

    const settings = prepareSettings(db, clock);
    const stored = settings.getSetting(SettingKey.timeZone);
    const site = zone ?? (typeof stored === 'string' ? checkTimeZone(stored, `settings ${SettingKey.timeZone}`) : 'UTC');
    if (stored !== site) settings.setSetting(SettingKey.timeZone, site);

    const retention = prepareRetention(db, settings, clock);
    const store: Store = {
      file,
      timeZone: site,
      db,
      close: () => db.close(),
      ...settings,
      ...retention,
      ...prepareCameras(db, clock),
      ...prepareZones(db, clock),
      ...prepareSamples(db, prepareRollupWriter(db)),
      ...prepareSequence(db),
      ...prepareRollups(db, retention.samplesPrunedBefore),
      ...prepareEvents(db, clock),
      ...prepareModels(db, clock),
      ...prepareCalibration(db, clock),
    };
    return store;
  } catch (error) {
    db.close();
    throw new Error(`cannot open store ${file}: ${(error as Error).message}`, { cause: error });
  }
}
