import { createWriteStream, existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { once } from 'node:events';
import { hourlyRows, writeHourlyCsv, type HourlySource } from '../outputs/hourlyCsv.ts';
import Database from 'better-sqlite3';
import { openStore } from '../store/index.ts';
import { loadCollectorConfig } from '../outputs/mqtt/collectorConfig.ts';
import { openPostgresStore } from '../store/postgres/openPostgresStore.ts';
import { parseOptions, requireOption, UsageError } from './args.ts';

export const exportUsage = `residuum export [--data <folder> | --db <file> | --config <collector file>] --from <date> --to <date>
                [--camera <id>] [--zone <id>] [--time-zone <IANA zone>] [--out <file>]

Writes the hourly CSV (RFC 4180, UTF-8, header row) of the stored counts: one row per local hour,
camera and zone, with hour_start in ISO 8601 local time with UTC offset.
  --data       folder of residuum.db (default ./data)
  --db         the database file itself (instead of --data)
  --config     a collector's configuration: export from its store (PostgreSQL with storage.url,
               else the SQLite database in --data)
  --from, --to local dates YYYY-MM-DD (both inclusive) or ISO 8601 times with offset
  --camera     only this camera; --zone only this zone
  --time-zone  the zone for hour buckets (default: the site's, stored by residuum run)
  --out        write to this file (default: standard output)`;

/** `residuum export`: the hourly CSV from the database. */
export async function exportCommand(argv: string[], io = { out: process.stdout }): Promise<number> {
  const v = parseOptions(argv, {
    data: { type: 'string' },
    db: { type: 'string' },
    from: { type: 'string' },
    to: { type: 'string' },
    camera: { type: 'string' },
    zone: { type: 'string' },
    'time-zone': { type: 'string' },
    out: { type: 'string' },
    config: { type: 'string' },
  });
  if (v.data !== undefined && v.db !== undefined) throw new UsageError('give --data or --db, not both');
  if (v.config !== undefined && v.db !== undefined) throw new UsageError('give --config or --db, not both');
  const from = requireOption(v.from, 'from', 'first local date (YYYY-MM-DD) or ISO 8601 time');
  const to = requireOption(v.to, 'to', 'last local date (YYYY-MM-DD, inclusive) or ISO 8601 time');
  const config = v.config === undefined ? undefined : loadCollectorConfig(v.config);
  let store: HourlySource & { close(): void };
  if (config?.storageUrl !== undefined) {
    store = openPostgresStore(config.storageUrl);
  } else {
    const file = v.db ?? join(resolve(v.data ?? 'data'), 'residuum.db');
    if (!existsSync(file)) throw new UsageError(`${file}: no database there (run residuum run first, or pass --data/--db)`);
    assertResiduumDatabase(file);
    store = openStore(file);
  }
  try {
    const rows = hourlyRows(store, {
      from,
      to,
      ...(v.camera && { camera: v.camera }),
      ...(v.zone && { zone: v.zone }),
      ...(v['time-zone'] && { timeZone: v['time-zone'] }),
    });
    if (v.out) {
      const out = createWriteStream(v.out);
      await writeHourlyCsv(rows, { out });
      out.end();
      await once(out, 'finish');
    } else {
      await writeHourlyCsv(rows, { out: io.out });
    }
  } finally {
    store.close();
  }
  return 0;
}

/**
 * Opening a store migrates it, so a file given by mistake would get Residuum's tables added. Look
 * first, read-only: a Residuum database has a schema version and a samples table.
 */
function assertResiduumDatabase(file: string): void {
  let db: Database.Database | undefined;
  try {
    db = new Database(file, { readonly: true, fileMustExist: true });
    const version = db.pragma('user_version', { simple: true }) as number;
    const samples = db.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'samples'").get();
    if (!(version >= 1 && samples)) throw new RangeError(`${file}: not a Residuum database (no schema version or samples table); nothing was changed`);
  } catch (error) {
    if (error instanceof RangeError) throw error;
    throw new RangeError(`${file}: not a readable SQLite database (${(error as Error).message}); nothing was changed`);
  } finally {
    db?.close();
  }
}
