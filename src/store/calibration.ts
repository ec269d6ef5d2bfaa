import type Database from 'better-sqlite3';
import { checkEpochMs, checkId, checkInt, checkNumber, checkText } from './validate.ts';

/** One "there are N people in this zone now", as stored: numbers only. */
export interface CalibrationPointInput {
  readonly camera: string;
  readonly zone: string;
  /** When it was given, UTC epoch ms; default now. */
  readonly time?: number;
  /** People in the zone, as counted by hand: a whole number 0..100 000. */
  readonly count: number;
  /** The zone's count features at that moment, in fitCountRegression's order: rule, area, edge, blobs. */
  readonly features: readonly [number, number, number, number];
  /** The zone's shape and settings the features were measured with (see zoneShapeKey). */
  readonly zoneShape: string;
  /** Who gave it (a role, never a key). */
  readonly givenBy: string;
}

export interface StoredCalibrationPoint extends Required<CalibrationPointInput> {
  readonly id: number;
}

export interface CalibrationStore {
  /** Stores a calibration point; returns its id. */
  insertCalibrationPoint(point: CalibrationPointInput): number;
  /** A zone's points, oldest first (of every shape; filter by zoneShape). */
  listCalibrationPoints(camera: string, zone: string): StoredCalibrationPoint[];
  /** Removes a zone's points; returns how many. */
  clearCalibrationPoints(camera: string, zone: string): number;
}

/** Features are perspective-normalised sizes and counts: far beyond this is a fault, not a crowd. */
const MAX_FEATURE = 1e6;

export function prepareCalibration(db: Database.Database, clock: () => number): CalibrationStore {
  const insert = db.prepare(`
    INSERT INTO calibration_points (camera, zone, time, count, rule, area, edge, blobs, zone_shape, given_by)
    VALUES (@camera, @zone, @time, @count, @rule, @area, @edge, @blobs, @zoneShape, @givenBy)
  `);
  const list = db.prepare('SELECT id, camera, zone, time, count, rule, area, edge, blobs, zone_shape, given_by FROM calibration_points WHERE camera = ? AND zone = ? ORDER BY time, id');
  const clear = db.prepare('DELETE FROM calibration_points WHERE camera = ? AND zone = ?');
  return {
    insertCalibrationPoint(point) {
      if (typeof point !== 'object' || point === null) throw new TypeError('calibration point: expected an object');
      const features = point.features;
      if (!Array.isArray(features) || features.length !== 4) throw new RangeError('point.features: expected 4 numbers (rule, area, edge, blobs)');
      const [rule, area, edge, blobs] = features.map((f, i) => checkNumber(f, `point.features[${i}]`, 0, MAX_FEATURE));
      const row = {
        camera: checkId(point.camera, 'point.camera'),
        zone: checkId(point.zone, 'point.zone'),
        time: point.time === undefined ? clock() : checkEpochMs(point.time, 'point.time'),
        count: checkInt(point.count, 'point.count', 0, 100_000),
        rule,
        area,
        edge,
        blobs,
        zoneShape: checkText(point.zoneShape, 'point.zoneShape', 100_000),
        givenBy: checkText(point.givenBy, 'point.givenBy'),
      };
      return Number(insert.run(row).lastInsertRowid);
    },
    listCalibrationPoints(camera, zone) {
      const rows = list.all(checkId(camera, 'camera'), checkId(zone, 'zone')) as {
        id: number; camera: string; zone: string; time: number; count: number; rule: number; area: number; edge: number; blobs: number; zone_shape: string; given_by: string;
      }[];
      return rows.map((r) => ({
        id: r.id,
        camera: r.camera,
        zone: r.zone,
        time: r.time,
        count: r.count,
        features: [r.rule, r.area, r.edge, r.blobs] as const,
        zoneShape: r.zone_shape,
        givenBy: r.given_by,
      }));
    },
    clearCalibrationPoints(camera, zone) {
      return clear.run(checkId(camera, 'camera'), checkId(zone, 'zone')).changes;
    },
  };
}
