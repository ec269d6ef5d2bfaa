import type Database from 'better-sqlite3';
import { AnchorPoint, ZoneKind, type Zone } from '../domain/zone.ts';
import { checkEpochMs, checkId, checkInt, checkNumber, checkOneOf, checkText } from './validate.ts';

/**
 * Zones and their history.
 *
 * `zones` holds each zone's current settings (the {@link Zone} object as JSON). Every change is
 * written to `zone_history` in the same transaction, one row per changed field with the old and
 * new JSON value: field `*` with old `null` when the zone is created (new = all settings), field
 * `*` with new `null` when it is removed. A removed zone keeps its row, so its samples and rollups
 * stay valid, and can be added again. A zone's kind cannot change: its samples and rollups mean
 * people (room) or fill (shelf); give a zone of the other kind a new id.
 */

/** Field order of the stored settings JSON (and of history rows for one change). */
const ZONE_FIELDS = ['id', 'name', 'kind', 'polygon', 'threshold', 'minBlobArea', 'personArea', 'perspective', 'anchor', 'capacity', 'absorbSeconds'] as const;

export interface ZoneRecord {
  readonly camera: string;
  readonly zone: Zone;
  /** When first added, UTC epoch ms. */
  readonly created: number;
  /** Last settings change, UTC epoch ms. */
  readonly updated: number;
  /** When removed, UTC epoch ms, or null while active. */
  readonly removed: number | null;
}

export interface ZoneHistoryEntry {
  readonly time: number;
  readonly camera: string;
  readonly zone: string;
  /** A {@link Zone} field name, or `*` for the whole zone (created or removed). */
  readonly field: string;
  /** Value before the change (parsed JSON); null when absent. */
  readonly old: unknown;
  /** Value after the change (parsed JSON); null when absent. */
  readonly new: unknown;
}

export interface ZoneStore {
  /**
   * Adds or updates a zone of an existing camera; returns the history rows written (empty when
   * nothing changed). `time` (epoch ms) defaults to the store's clock.
   */
  upsertZone(camera: string, zone: Zone, options?: { time?: number }): ZoneHistoryEntry[];
  /** Marks a zone removed; returns false when it was unknown or already removed. */
  removeZone(camera: string, id: string, options?: { time?: number }): boolean;
  getZone(camera: string, id: string): ZoneRecord | undefined;
  /** Zones ordered by camera then id; removed ones only with `includeRemoved`. */
  listZones(query?: { camera?: string; includeRemoved?: boolean }): ZoneRecord[];
  /** History of one zone, or of all zones of the camera, oldest first. */
  zoneHistory(camera: string, id?: string): ZoneHistoryEntry[];
}

/**
 * Checks the structure the store relies on and returns the zone with its fields in canonical order.
 * Polygon geometry beyond "≥ 3 vertices inside 0..1" (simplicity, winding) is the counting layer's.
 */
export function normaliseZone(zone: Zone, field = 'zone'): Zone {
  if (typeof zone !== 'object' || zone === null) throw new TypeError(`${field}: expected an object`);
  for (const key of Object.keys(zone)) {
    if (!(ZONE_FIELDS as readonly string[]).includes(key)) {
      throw new RangeError(`${field}.${key}: unknown zone field (known: ${ZONE_FIELDS.join(', ')})`);
    }
  }
  checkId(zone.id, `${field}.id`);
  if (zone.name !== undefined) checkText(zone.name, `${field}.name`);
  checkOneOf(zone.kind, `${field}.kind`, ZoneKind);
  if (!Array.isArray(zone.polygon) || zone.polygon.length < 3) {
    throw new RangeError(`${field}.polygon: expected an array of at least 3 [x, y] points`);
  }
  zone.polygon.forEach((p, i) => {
    if (!Array.isArray(p) || p.length !== 2) throw new TypeError(`${field}.polygon[${i}]: expected [x, y]`);
    checkNumber(p[0], `${field}.polygon[${i}][0]`, 0, 1);
    checkNumber(p[1], `${field}.polygon[${i}][1]`, 0, 1);
  });
  if (zone.threshold !== undefined) checkNumber(zone.threshold, `${field}.threshold`, 0, 1e6);
  if (zone.minBlobArea !== undefined) checkNumber(zone.minBlobArea, `${field}.minBlobArea`, 0, 1);
  if (zone.personArea !== undefined) checkNumber(zone.personArea, `${field}.personArea`, 0, 1);
  if (zone.perspective !== undefined) {
    if (!Array.isArray(zone.perspective) || zone.perspective.length < 2) throw new RangeError(`${field}.perspective: expected an array of at least 2 reference people`);
    zone.perspective.forEach((r, i) => {
      if (typeof r !== 'object' || r === null) throw new TypeError(`${field}.perspective[${i}]: expected {y, area} or {x, y, area, height}`);
      checkNumber(r.y, `${field}.perspective[${i}].y`, 0, 1);
      checkNumber(r.area, `${field}.perspective[${i}].area`, 0, 1);
      if (r.x !== undefined) checkNumber(r.x, `${field}.perspective[${i}].x`, 0, 1);
      if (r.height !== undefined) checkNumber(r.height, `${field}.perspective[${i}].height`, 0, 1);
    });
  }
  if (zone.anchor !== undefined) checkOneOf(zone.anchor, `${field}.anchor`, AnchorPoint);
  if (zone.capacity !== undefined) checkInt(zone.capacity, `${field}.capacity`, 0, 1_000_000);
  if (zone.absorbSeconds !== undefined) checkNumber(zone.absorbSeconds, `${field}.absorbSeconds`, 1, 604_800);
  const out: Record<string, unknown> = {};
  for (const key of ZONE_FIELDS) {
    const value = (zone as unknown as Record<string, unknown>)[key];
    if (value !== undefined) out[key] = key === 'polygon' ? zone.polygon.map((p) => [p[0], p[1]]) : value;
  }
  return out as unknown as Zone;
}

interface ZoneRowSql {
  camera: string;
  id: string;
  kind: string;
  settings: string;
  created: number;
  updated: number;
  removed: number | null;
}

interface HistoryRowSql {
  time: number;
  camera: string;
  zone: string;
  field: string;
  old_value: string | null;
  new_value: string | null;
}

function toRecord(r: ZoneRowSql): ZoneRecord {
  return { camera: r.camera, zone: JSON.parse(r.settings) as Zone, created: r.created, updated: r.updated, removed: r.removed };
}

function parseOrNull(text: string | null): unknown {
  return text === null ? null : JSON.parse(text);
}

export function prepareZones(db: Database.Database, clock: () => number): ZoneStore {
  const cameraExists = db.prepare('SELECT 1 FROM cameras WHERE id = ?');
  const get = db.prepare('SELECT camera, id, kind, settings, created, updated, removed FROM zones WHERE camera = ? AND id = ?');
  const insert = db.prepare(`
    INSERT INTO zones (camera, id, kind, settings, created, updated, removed)
    VALUES (@camera, @id, @kind, @settings, @time, @time, NULL)
  `);
  const update = db.prepare(`
    UPDATE zones SET settings = @settings, updated = @time, removed = NULL WHERE camera = @camera AND id = @id
  `);
  const markRemoved = db.prepare('UPDATE zones SET removed = @time, updated = @time WHERE camera = @camera AND id = @id');
  const addHistory = db.prepare(`
    INSERT INTO zone_history (time, camera, zone, field, old_value, new_value)
    VALUES (@time, @camera, @zone, @field, @old, @new)
  `);
  const listAll = db.prepare(`
    SELECT camera, id, kind, settings, created, updated, removed FROM zones
    WHERE (@camera IS NULL OR camera = @camera) AND (@includeRemoved = 1 OR removed IS NULL)
    ORDER BY camera, id
  `);
  const history = db.prepare(`
    SELECT time, camera, zone, field, old_value, new_value FROM zone_history
    WHERE camera = @camera AND (@zone IS NULL OR zone = @zone) ORDER BY time, id
  `);

  const upsert = db.transaction((camera: string, zone: Zone, time: number): ZoneHistoryEntry[] => {
    if (cameraExists.get(camera) === undefined) {
      throw new RangeError(`camera: no camera '${camera}'; add it with upsertCamera first`);
    }
    const settings = JSON.stringify(zone);
    const row = get.get(camera, zone.id) as ZoneRowSql | undefined;
    const entries: { field: string; old: string | null; new: string | null }[] = [];
    if (row === undefined) {
      insert.run({ camera, id: zone.id, kind: zone.kind, settings, time });
      entries.push({ field: '*', old: null, new: settings });
    } else {
      if (row.kind !== zone.kind) {
        throw new RangeError(`zone.kind: zone '${camera}/${zone.id}' is a ${row.kind} zone; use a new id for a ${zone.kind} zone`);
      }
      if (row.removed !== null) {
        entries.push({ field: '*', old: null, new: settings });
      } else {
        const before = JSON.parse(row.settings) as Record<string, unknown>;
        const after = zone as unknown as Record<string, unknown>;
        for (const key of ZONE_FIELDS) {
          const o = before[key] === undefined ? null : JSON.stringify(before[key]);
          const n = after[key] === undefined ? null : JSON.stringify(after[key]);
          if (o !== n) entries.push({ field: key, old: o, new: n });
        }
      }
      if (entries.length > 0) update.run({ camera, id: zone.id, settings, time });
    }
    for (const e of entries) addHistory.run({ time, camera, zone: zone.id, field: e.field, old: e.old, new: e.new });
    return entries.map((e) => ({ time, camera, zone: zone.id, field: e.field, old: parseOrNull(e.old), new: parseOrNull(e.new) }));
  });

  const remove = db.transaction((camera: string, id: string, time: number): boolean => {
    const row = get.get(camera, id) as ZoneRowSql | undefined;
    if (row === undefined || row.removed !== null) return false;
    markRemoved.run({ camera, id, time });
    addHistory.run({ time, camera, zone: id, field: '*', old: row.settings, new: null });
    return true;
  });

  return {
    upsertZone(camera, zone, options = {}) {
      const { time = clock() } = options;
      return upsert.immediate(checkId(camera, 'camera'), normaliseZone(zone), checkEpochMs(time, 'options.time'));
    },
    removeZone(camera, id, options = {}) {
      const { time = clock() } = options;
      return remove.immediate(checkId(camera, 'camera'), checkId(id, 'id'), checkEpochMs(time, 'options.time'));
    },
    getZone(camera, id) {
      const row = get.get(checkId(camera, 'camera'), checkId(id, 'id')) as ZoneRowSql | undefined;
      return row === undefined ? undefined : toRecord(row);
    },
    listZones(query = {}) {
      const { camera, includeRemoved = false } = query;
      const rows = listAll.all({ camera: camera === undefined ? null : checkId(camera, 'query.camera'), includeRemoved: includeRemoved ? 1 : 0 });
      return (rows as ZoneRowSql[]).map(toRecord);
    },
    zoneHistory(camera, id) {
      const rows = history.all({ camera: checkId(camera, 'camera'), zone: id === undefined ? null : checkId(id, 'id') }) as HistoryRowSql[];
      return rows.map((r) => ({ time: r.time, camera: r.camera, zone: r.zone, field: r.field, old: parseOrNull(r.old_value), new: parseOrNull(r.new_value) }));
    },
  };
}
