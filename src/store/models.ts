import type Database from 'better-sqlite3';
import { checkEpochMs, checkId, checkInt, toJson } from './validate.ts';

/**
 * Background models: the learned empty scene of a camera (mean and eigen-images of the PCA
 * subspace, serialised by the vision layer). This is the only image-like data the store keeps; a
 * frame with people in it is never stored. The bytes are kept exactly as given (BLOB); `width`,
 * `height`, `components` and `formatVersion` describe them so a reader can refuse a model it does
 * not understand without decoding it.
 *
 * Each camera has at most one *active* model, the one it counts with (`cameras.active_model`; a
 * foreign key, so the active model cannot be deleted). A model may be stored *rejected*: learned,
 * judged not usable, kept so that an admin can still choose it. `keep` bounds how many models a
 * camera keeps: the active one and the newest others, oldest deleted first.
 *
 * ```ts
 * const id = store.insertModel({ camera: 'door', width: 320, height: 240, components: 8, formatVersion: 1, data }, { activate: true, keep: 5 });
 * store.activeModel('door')?.id === id; // true
 * store.activateModel('door', olderId); // roll back
 * ```
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
  /** Learned but judged not usable (kept for an admin to choose); default false. */
  readonly rejected?: boolean;
}

export interface InsertModelOptions {
  /** Make it the camera's active model (the one it counts with); default false. */
  readonly activate?: boolean;
  /** Then keep at most this many of the camera's models (see {@link ModelStore.pruneModels}); 1..10 000 inclusive; default: delete none. */
  readonly keep?: number;
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
  /** Learned but judged not usable. */
  readonly rejected: boolean;
  /** The camera counts with it. */
  readonly active: boolean;
}

export interface ModelRecord extends ModelInfo {
  readonly data: Uint8Array;
}

export interface ModelStore {
  /**
   * Stores a model; returns its id. With `activate` it becomes the camera's active model, and with
   * `keep` the camera's older models beyond that many are deleted, all in one transaction.
   */
  insertModel(model: ModelInput, options?: InsertModelOptions): number;
  getModel(id: number): ModelRecord | undefined;
  /** The camera's most recently created model (ties: the last stored), active or not. */
  latestModel(camera: string): ModelRecord | undefined;
  /** The model the camera counts with, if any. */
  activeModel(camera: string): ModelRecord | undefined;
  /** The id of the model the camera counts with, if any (without reading its bytes). */
  activeModelId(camera: string): number | undefined;
  /** Makes model `id` the camera's active model; throws a RangeError naming both when the camera has no such model. */
  activateModel(camera: string, id: number): void;
  /** The camera's models without bytes, oldest first. */
  listModels(camera: string): ModelInfo[];
  /**
   * Keeps at most `keep` (1..10 000 inclusive) of the camera's models: the active one and the
   * newest others (by `created`, then id); deletes the rest. Returns the deleted ids, oldest first.
   */
  pruneModels(camera: string, keep: number): number[];
  /** Deletes a model; returns whether it existed. Throws a RangeError for a camera's active model. */
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
  rejected: number;
  active: number;
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
    rejected: r.rejected === 1,
    active: r.active === 1,
  };
}

function toRecord(r: ModelRowSql): ModelRecord {
  const data = r.data as Buffer;
  return { ...toInfo(r), data: new Uint8Array(data.buffer, data.byteOffset, data.byteLength) };
}

const COLUMNS = `m.id, m.camera, m.created, m.width, m.height, m.components, m.format_version, length(m.data) AS bytes, m.metadata,
  m.rejected, coalesce(c.active_model = m.id, 0) AS active`;
const FROM = 'models m JOIN cameras c ON c.id = m.camera';

export function prepareModels(db: Database.Database, clock: () => number): ModelStore {
  const cameraExists = db.prepare('SELECT 1 FROM cameras WHERE id = ?');
  const insert = db.prepare(`
    INSERT INTO models (camera, created, width, height, components, format_version, data, metadata, rejected)
    VALUES (@camera, @created, @width, @height, @components, @formatVersion, @data, @metadata, @rejected)
  `);
  const get = db.prepare(`SELECT ${COLUMNS}, m.data FROM ${FROM} WHERE m.id = ?`);
  const latest = db.prepare(`SELECT ${COLUMNS}, m.data FROM ${FROM} WHERE m.camera = ? ORDER BY m.created DESC, m.id DESC LIMIT 1`);
  const active = db.prepare(`SELECT ${COLUMNS}, m.data FROM ${FROM} WHERE c.id = ? AND m.id = c.active_model`);
  const activeId = db.prepare('SELECT active_model AS id FROM cameras WHERE id = ?');
  const ownedBy = db.prepare('SELECT 1 FROM models WHERE id = ? AND camera = ?');
  const setActive = db.prepare('UPDATE cameras SET active_model = @id WHERE id = @camera');
  const list = db.prepare(`SELECT ${COLUMNS} FROM ${FROM} WHERE m.camera = ? ORDER BY m.created, m.id`);
  const newestFirst = db.prepare('SELECT id FROM models WHERE camera = ? ORDER BY created DESC, id DESC');
  const isActive = db.prepare('SELECT id AS camera FROM cameras WHERE active_model = ?');
  const remove = db.prepare('DELETE FROM models WHERE id = ?');

  function activeIdOf(camera: string): number | undefined {
    const row = activeId.get(camera) as { id: number | null } | undefined;
    return row?.id ?? undefined;
  }

  function activate(camera: string, id: number): void {
    if (ownedBy.get(id, camera) === undefined) throw new RangeError(`id: camera '${camera}' has no model ${id}`);
    setActive.run({ id, camera });
  }

  function prune(camera: string, keep: number): number[] {
    const current = activeIdOf(camera);
    const others = (newestFirst.all(camera) as { id: number }[]).map((r) => r.id).filter((id) => id !== current);
    const deleted = others.slice(Math.max(0, keep - (current === undefined ? 0 : 1))).reverse();
    for (const id of deleted) remove.run(id);
    return deleted;
  }

  const insertTx = db.transaction((row: Record<string, unknown>, camera: string, options: InsertModelOptions) => {
    const id = Number(insert.run(row).lastInsertRowid);
    if (options.activate) setActive.run({ id, camera });
    if (options.keep !== undefined) prune(camera, options.keep);
    return id;
  });
  const pruneTx = db.transaction(prune);

  return {
    insertModel(model, options = {}) {
      if (typeof model !== 'object' || model === null) throw new TypeError('model: expected an object');
      const camera = checkId(model.camera, 'model.camera');
      if (!(model.data instanceof Uint8Array)) throw new TypeError('model.data: expected a Uint8Array of the model file bytes');
      if (model.rejected !== undefined && typeof model.rejected !== 'boolean') throw new TypeError('model.rejected: expected true or false');
      if (options.activate !== undefined && typeof options.activate !== 'boolean') throw new TypeError('options.activate: expected true or false');
      const keep = options.keep === undefined ? undefined : checkInt(options.keep, 'options.keep', 1, 10_000);
      const row = {
        camera,
        created: checkEpochMs(model.created ?? clock(), 'model.created'),
        width: checkInt(model.width, 'model.width', 1, 65_535),
        height: checkInt(model.height, 'model.height', 1, 65_535),
        components: checkInt(model.components, 'model.components', 0, 10_000),
        formatVersion: checkInt(model.formatVersion, 'model.formatVersion', 1, 1_000_000),
        data: Buffer.from(model.data.buffer, model.data.byteOffset, model.data.byteLength),
        metadata: toJson(model.metadata ?? {}, 'model.metadata'),
        rejected: model.rejected === true ? 1 : 0,
      };
      if (cameraExists.get(camera) === undefined) throw new RangeError(`model.camera: no camera '${camera}'; add it with upsertCamera first`);
      return insertTx(row, camera, { activate: options.activate === true, ...(keep !== undefined && { keep }) });
    },
    getModel(id) {
      const row = get.get(checkInt(id, 'id', 1, Number.MAX_SAFE_INTEGER)) as ModelRowSql | undefined;
      return row === undefined ? undefined : toRecord(row);
    },
    latestModel(camera) {
      const row = latest.get(checkId(camera, 'camera')) as ModelRowSql | undefined;
      return row === undefined ? undefined : toRecord(row);
    },
    activeModel(camera) {
      const row = active.get(checkId(camera, 'camera')) as ModelRowSql | undefined;
      return row === undefined ? undefined : toRecord(row);
    },
    activeModelId(camera) {
      return activeIdOf(checkId(camera, 'camera'));
    },
    activateModel(camera, id) {
      activate(checkId(camera, 'camera'), checkInt(id, 'id', 1, Number.MAX_SAFE_INTEGER));
    },
    listModels(camera) {
      return (list.all(checkId(camera, 'camera')) as ModelRowSql[]).map(toInfo);
    },
    pruneModels(camera, keep) {
      return pruneTx(checkId(camera, 'camera'), checkInt(keep, 'keep', 1, 10_000));
    },
    deleteModel(id) {
      const checked = checkInt(id, 'id', 1, Number.MAX_SAFE_INTEGER);
      const owner = isActive.get(checked) as { camera: string } | undefined;
      if (owner !== undefined) throw new RangeError(`id: model ${checked} is camera '${owner.camera}''s active model; activate another one first`);
      return remove.run(checked).changes > 0;
    },
  };
}
