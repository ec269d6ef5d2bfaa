import type Database from 'better-sqlite3';
import { checkEpochMs, checkId, checkInt, checkOneOf, toJson } from './validate.ts';

/**
 * Events: things that happened to a camera or zone, with a JSON detail. They are the log a
 * facilities user reads next to the numbers ("camera offline 02:10–02:40" explains a coverage gap).
 * Events are kept until deleted (no retention).
 */

/** Event types. Add new ones here; the store refuses any other string. */
export const EventType = {
  /** The camera stopped delivering frames. */
  offline: 'offline',
  /** The camera delivers frames again. */
  online: 'online',
  /** The view no longer matches the learned empty scene (moved, covered). */
  viewChanged: 'view-changed',
  /** The view matches the learned scene again. */
  viewRestored: 'view-restored',
  /** A room zone's count went above its capacity. */
  capacityExceeded: 'capacity-exceeded',
  /** A new empty-scene model was learned, stored and put to use. */
  modelLearned: 'model-learned',
  /** A model was learned but judged not usable: stored as rejected, the camera kept its model. */
  learningRejected: 'learning-rejected',
  /** An admin put a kept model to use (a roll-back). */
  modelActivated: 'model-activated',
  /** The model is older than its validity or drifted. */
  modelStale: 'model-stale',
  /** Settings (zones, thresholds) were changed. */
  settingsChanged: 'settings-changed',
  /** Someone gave the number of people in a room zone (a calibration point). */
  calibrationAdded: 'calibration-added',
  /** A room zone's calibration points were removed. */
  calibrationCleared: 'calibration-cleared',
  /** An alert (over capacity, low stock, camera offline) was delivered to a webhook or by e-mail. */
  alertSent: 'alert-sent',
  /** An alert could not be delivered (after its retries); the detail says why. */
  alertFailed: 'alert-failed',
} as const;
export type EventType = (typeof EventType)[keyof typeof EventType];

export interface EventInput {
  /** When it happened, UTC epoch ms; default the store's clock. */
  readonly time?: number;
  readonly camera: string;
  /** The zone concerned, if any; default null (the whole camera). */
  readonly zone?: string | null;
  readonly type: EventType;
  /** Any JSON-representable detail; default `{}`. Never pixels of a frame. */
  readonly detail?: unknown;
}

export interface StoredEvent {
  readonly id: number;
  readonly time: number;
  readonly camera: string;
  readonly zone: string | null;
  readonly type: EventType;
  readonly detail: unknown;
}

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
