import type Database from 'better-sqlite3';
import { checkEpochMs, checkId, checkInt, checkOneOf, toJson } from './validate.ts';

export { EventType, type EventInput, type StoredEvent } from '../domain/event.ts';
import { EventType, type EventInput, type StoredEvent } from '../domain/event.ts';

export interface EventQuery {
  /** Events with time ≥ from, epoch ms (inclusive); default 0. */
  readonly from?: number;
  /** Events with time < to, epoch ms (exclusive); default no bound. */
  readonly to?: number;
  readonly camera?: string;
  readonly type?: EventType;
  /** Most events returned, oldest first; default 10 000, 1..1 000 000 inclusive. */
  readonly limit?: number;
}

export interface EventStore {
  /** Stores an event; returns its id. */
  insertEvent(event: EventInput): number;
  listEvents(query?: EventQuery): StoredEvent[];
}

interface EventRowSql {
  id: number;
  time: number;
  camera: string;
  zone: string | null;
  type: EventType;
  detail: string;
}

export function prepareEvents(db: Database.Database, clock: () => number): EventStore {
  const insert = db.prepare(`
    INSERT INTO events (time, camera, zone, type, detail) VALUES (@time, @camera, @zone, @type, @detail)
  `);
  const list = db.prepare(`
    SELECT id, time, camera, zone, type, detail FROM events
    WHERE time >= @from AND time < @to AND (@camera IS NULL OR camera = @camera) AND (@type IS NULL OR type = @type)
    ORDER BY time, id LIMIT @limit
  `);
  return {
    insertEvent(event) {
      if (typeof event !== 'object' || event === null) throw new TypeError('event: expected an object');
      const row = {
        time: checkEpochMs(event.time ?? clock(), 'event.time'),
        camera: checkId(event.camera, 'event.camera'),
        zone: event.zone == null ? null : checkId(event.zone, 'event.zone'),
        type: checkOneOf(event.type, 'event.type', EventType),
        detail: toJson(event.detail ?? {}, 'event.detail'),
      };
      return Number(insert.run(row).lastInsertRowid);
    },
    listEvents(query = {}) {
      const { from = 0, to = Number.MAX_SAFE_INTEGER, camera, type, limit = 10_000 } = query;
      const rows = list.all({
        from,
        to,
        camera: camera === undefined ? null : checkId(camera, 'query.camera'),
        type: type === undefined ? null : checkOneOf(type, 'query.type', EventType),
        limit: checkInt(limit, 'query.limit', 1, 1_000_000),
      }) as EventRowSql[];
      return rows.map((r) => ({ ...r, detail: JSON.parse(r.detail) as unknown }));
    },
  };
}
