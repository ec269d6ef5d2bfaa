import type Database from 'better-sqlite3';
import { checkEpochMs, checkId, checkText } from './validate.ts';

/** Cameras known to the store; zones, samples, models and events refer to them by id. */
export interface CameraInput {
  /** Stable identifier (letters, digits, `-`, `_`; 1..64 characters). */
  readonly id: string;
  /** Human name for tables and exports; default the id; 1..200 characters. */
  readonly name?: string;
}

export interface CameraRecord {
  readonly id: string;
  readonly name: string;
  /** When first added, UTC epoch ms. */
  readonly created: number;
}

export interface CameraStore {
  /** Adds a camera or renames an existing one; `time` (epoch ms) defaults to the store's clock. */
  upsertCamera(camera: CameraInput, options?: { time?: number }): CameraRecord;
  getCamera(id: string): CameraRecord | undefined;
  /** All cameras ordered by id. */
  listCameras(): CameraRecord[];
}

export function prepareCameras(db: Database.Database, clock: () => number): CameraStore {
  const upsert = db.prepare(`
    INSERT INTO cameras (id, name, created) VALUES (@id, @name, @time)
    ON CONFLICT (id) DO UPDATE SET name = excluded.name
  `);
  const get = db.prepare('SELECT id, name, created FROM cameras WHERE id = ?');
  const list = db.prepare('SELECT id, name, created FROM cameras ORDER BY id');

  return {
    upsertCamera(camera, options = {}) {
      const { time = clock() } = options;
      const id = checkId(camera?.id, 'camera.id');
      const name = camera.name === undefined ? id : checkText(camera.name, 'camera.name');
      upsert.run({ id, name, time: checkEpochMs(time, 'options.time') });
      return get.get(id) as CameraRecord;
    },
    getCamera(id) {
      return get.get(checkId(id, 'id')) as CameraRecord | undefined;
    },
    listCameras() {
      return list.all() as CameraRecord[];
    },
  };
}
