import type Database from 'better-sqlite3';
import { checkEpochMs, checkId, checkInt, toJson } from './validate.ts';

/**
 * Background models: the learned empty scene of a camera (mean and eigen-images of the PCA
 * subspace, serialised by the vision layer). This is the only image-like data the store keeps; a
 * frame with people in it is never stored. The bytes are kept exactly as given (BLOB); `width`,
 * `height`, `components` and `formatVersion` describe them so a reader can refuse a model it does
 * not understand without decoding it.
 */

export interface ModelInput {
  readonly camera: string;
  /** When learned, UTC epoch ms; default the store's clock. */
  readonly created?: number;
  /** Working-resolution width the model was learned at, pixels; 1..65 535 inclusive. */
  readonly width: number;
  /** Working-resolution height, pixels; 1..65 535 inclusive. */
  readonly height: number;
  /** Number of eigen-images kept; 0..10 000 inclusive. */
  readonly components: number;
  /** Version of the byte layout written by the vision layer; ≥ 1. */
  readonly formatVersion: number;
  /** The model file bytes. */
  readonly data: Uint8Array;
  /** Any JSON-representable description (noise level, frames used...); default `{}`. */
  readonly metadata?: unknown;
}

/** A stored model without its bytes. */
export interface ModelInfo {
  readonly id: number;
  readonly camera: string;
  readonly created: number;
  readonly width: number;
  readonly height: number;
  readonly components: number;
  readonly formatVersion: number;
  /** Length of the stored bytes. */
  readonly bytes: number;
  readonly metadata: unknown;
}

export interface ModelRecord extends ModelInfo {
  readonly data: Uint8Array;
}

export interface ModelStore {
  /** Stores a model; returns its id. */
  insertModel(model: ModelInput): number;
  getModel(id: number): ModelRecord | undefined;
  /** The camera's most recently created model (ties: the last stored). */
  latestModel(camera: string): ModelRecord | undefined;
  /** The camera's models without bytes, oldest first. */
  listModels(camera: string): ModelInfo[];
  /** Deletes a model; returns whether it existed. */
  deleteModel(id: number): boolean;
}

interface ModelRowSql {
  id: number;
  camera: string;
  created: number;
  width: number;
  height: number;
  components: number;
  format_version: number;
  bytes: number;
  metadata: string;
  data?: Buffer;
}

function toInfo(r: ModelRowSql): ModelInfo {
  return {
    id: r.id,
    camera: r.camera,
    created: r.created,
    width: r.width,
    height: r.height,
    components: r.components,
    formatVersion: r.format_version,
    bytes: r.bytes,
    metadata: JSON.parse(r.metadata) as unknown,
  };
}

function toRecord(r: ModelRowSql): ModelRecord {
  const data = r.data as Buffer;
  return { ...toInfo(r), data: new Uint8Array(data.buffer, data.byteOffset, data.byteLength) };
}

const COLUMNS = 'id, camera, created, width, height, components, format_version, length(data) AS bytes, metadata';

export function prepareModels(db: Database.Database, clock: () => number): ModelStore {
  const cameraExists = db.prepare('SELECT 1 FROM cameras WHERE id = ?');
  const insert = db.prepare(`
    INSERT INTO models (camera, created, width, height, components, format_version, data, metadata)
    VALUES (@camera, @created, @width, @height, @components, @formatVersion, @data, @metadata)
  `);
  const get = db.prepare(`SELECT ${COLUMNS}, data FROM models WHERE id = ?`);
  const latest = db.prepare(`SELECT ${COLUMNS}, data FROM models WHERE camera = ? ORDER BY created DESC, id DESC LIMIT 1`);
  const list = db.prepare(`SELECT ${COLUMNS} FROM models WHERE camera = ? ORDER BY created, id`);
  const remove = db.prepare('DELETE FROM models WHERE id = ?');

  return {
    insertModel(model) {
      if (typeof model !== 'object' || model === null) throw new TypeError('model: expected an object');
      const camera = checkId(model.camera, 'model.camera');
      if (!(model.data instanceof Uint8Array)) throw new TypeError('model.data: expected a Uint8Array of the model file bytes');
      const row = {
        camera,
        created: checkEpochMs(model.created ?? clock(), 'model.created'),
        width: checkInt(model.width, 'model.width', 1, 65_535),
        height: checkInt(model.height, 'model.height', 1, 65_535),
        components: checkInt(model.components, 'model.components', 0, 10_000),
        formatVersion: checkInt(model.formatVersion, 'model.formatVersion', 1, 1_000_000),
        data: Buffer.from(model.data.buffer, model.data.byteOffset, model.data.byteLength),
        metadata: toJson(model.metadata ?? {}, 'model.metadata'),
      };
      if (cameraExists.get(camera) === undefined) throw new RangeError(`model.camera: no camera '${camera}'; add it with upsertCamera first`);
      return Number(insert.run(row).lastInsertRowid);
    },
    getModel(id) {
      const row = get.get(checkInt(id, 'id', 1, Number.MAX_SAFE_INTEGER)) as ModelRowSql | undefined;
      return row === undefined ? undefined : toRecord(row);
    },
    latestModel(camera) {
      const row = latest.get(checkId(camera, 'camera')) as ModelRowSql | undefined;
      return row === undefined ? undefined : toRecord(row);
    },
    listModels(camera) {
      return (list.all(checkId(camera, 'camera')) as ModelRowSql[]).map(toInfo);
    },
    deleteModel(id) {
      return remove.run(checkInt(id, 'id', 1, Number.MAX_SAFE_INTEGER)).changes > 0;
    },
  };
}
