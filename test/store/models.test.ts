import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { migrate, migrations, openStore } from '../../src/store/index.ts';
import { tempStore, type TempStore } from './tempStore.ts';

/** Deterministic pseudo-random bytes (a linear congruential generator). */
function bytes(n: number, seed: number): Uint8Array {
  const out = new Uint8Array(n);
  let x = seed >>> 0;
  for (let i = 0; i < n; i++) {
    x = (Math.imul(x, 1664525) + 1013904223) >>> 0;
    out[i] = x >>> 24;
  }
  return out;
}

describe('models', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
    t.store.upsertCamera({ id: 'cam' });
  });
  afterEach(() => t.cleanup());

  it('round-trips the model bytes exactly, including from a view into a larger buffer', () => {
    const data = bytes(3 * 1024 * 1024 + 7, 42);
    const id = t.store.insertModel({ camera: 'cam', created: 10, width: 160, height: 120, components: 8, formatVersion: 1, data, metadata: { noise: 2.5 } });
    const back = t.store.getModel(id);
    expect(back).toMatchObject({ id, camera: 'cam', created: 10, width: 160, height: 120, components: 8, formatVersion: 1, bytes: data.length, metadata: { noise: 2.5 } });
    expect(back?.data).toBeInstanceOf(Uint8Array);
    expect(Buffer.compare(Buffer.from(back!.data), Buffer.from(data))).toBe(0);

    const big = bytes(1000, 7);
    const view = big.subarray(100, 300);
    const id2 = t.store.insertModel({ camera: 'cam', created: 20, width: 10, height: 20, components: 1, formatVersion: 2, data: view });
    const back2 = t.store.getModel(id2)!;
    expect(back2.data.length).toBe(200);
    expect(Array.from(back2.data)).toEqual(Array.from(view));
    // The stored copy does not follow later changes to the caller's buffer.
    big[150] ^= 0xff;
    expect(t.store.getModel(id2)!.data[50]).toBe(back2.data[50]);
    expect(t.store.getModel(id2)!.data[50]).not.toBe(big[150]);
  });

  it('stores an empty model file and lists models without bytes', () => {
    const id = t.store.insertModel({ camera: 'cam', created: 5, width: 1, height: 1, components: 0, formatVersion: 1, data: new Uint8Array(0) });
    expect(t.store.getModel(id)?.data.length).toBe(0);
    t.store.insertModel({ camera: 'cam', created: 9, width: 2, height: 2, components: 1, formatVersion: 1, data: bytes(16, 1) });
    const list = t.store.listModels('cam');
    expect(list.map((m) => [m.created, m.bytes])).toEqual([
      [5, 0],
      [9, 16],
    ]);
    expect(list[0]).not.toHaveProperty('data');
    expect(t.store.latestModel('cam')?.created).toBe(9);
    expect(t.store.deleteModel(id)).toBe(true);
    expect(t.store.getModel(id)).toBeUndefined();
  });

  it('refuses bad input by field', () => {
    const base = { camera: 'cam', width: 4, height: 4, components: 1, formatVersion: 1, data: new Uint8Array(4) };
    expect(() => t.store.insertModel({ ...base, data: [1, 2] as unknown as Uint8Array })).toThrow(/^model\.data/);
    expect(() => t.store.insertModel({ ...base, width: 0 })).toThrow(/^model\.width/);
    expect(() => t.store.insertModel({ ...base, camera: 'other' })).toThrow(/^model\.camera: no camera 'other'/);
    expect(() => t.store.insertModel({ ...base, metadata: { n: 1n } })).toThrow(/^model\.metadata/);
  });
});

describe('the active model and the models kept', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
    t.store.upsertCamera({ id: 'cam' });
    t.store.upsertCamera({ id: 'other' });
  });
  afterEach(() => t.cleanup());

  const model = (created: number, extra: { camera?: string; rejected?: boolean } = {}) => ({
    camera: 'cam',
    created,
    width: 4,
    height: 4,
    components: 1,
    formatVersion: 1,
    data: bytes(64, created),
    ...extra,
  });
  const ids = (camera = 'cam') => t.store.listModels(camera).map((m) => m.id);

  it('has no active model until one is activated; storing does not activate by itself', () => {
    const a = t.store.insertModel(model(10));
    expect(t.store.activeModel('cam')).toBeUndefined();
    expect(t.store.activeModelId('cam')).toBeUndefined();
    expect(t.store.listModels('cam')[0]).toMatchObject({ id: a, active: false, rejected: false });
    const b = t.store.insertModel(model(20), { activate: true });
    expect(t.store.activeModelId('cam')).toBe(b);
    expect(t.store.activeModel('cam')?.data).toEqual(bytes(64, 20));
    t.store.activateModel('cam', a);
    expect(t.store.activeModelId('cam')).toBe(a);
    expect(t.store.listModels('cam').map((m) => [m.id, m.active])).toEqual([
      [a, true],
      [b, false],
    ]);
  });

  it('keeps a rejected model, marked, without making it active', () => {
    const good = t.store.insertModel(model(10), { activate: true });
    const poor = t.store.insertModel(model(20, { rejected: true }), { keep: 5 });
    expect(t.store.activeModelId('cam')).toBe(good);
    expect(t.store.listModels('cam').map((m) => [m.id, m.rejected, m.active])).toEqual([
      [good, false, true],
      [poor, true, false],
    ]);
    // It is still there to be chosen.
    t.store.activateModel('cam', poor);
    expect(t.store.activeModel('cam')?.rejected).toBe(true);
  });

  it('deletes the oldest models beyond the limit after each stored one', () => {
    const stored: number[] = [];
    for (let i = 1; i <= 7; i++) stored.push(t.store.insertModel(model(i * 10), { activate: true, keep: 3 }));
    expect(ids()).toEqual(stored.slice(-3));
    expect(t.store.activeModelId('cam')).toBe(stored[6]);
    // Another camera's models are not touched.
    const theirs = t.store.insertModel(model(5, { camera: 'other' }), { activate: true, keep: 1 });
    t.store.insertModel(model(80), { keep: 3 });
    expect(ids('other')).toEqual([theirs]);
  });

  it('never deletes the active model: it is kept with the newest others, up to the limit in all', () => {
    const first = t.store.insertModel(model(10), { activate: true });
    const later: number[] = [];
    // Rejected learnings count against the limit too.
    for (let i = 2; i <= 6; i++) later.push(t.store.insertModel(model(i * 10, { rejected: true }), { keep: 3 }));
    expect(ids()).toEqual([first, later[3], later[4]]);
    expect(t.store.activeModelId('cam')).toBe(first);
    // keep 1: only the model in use is left.
    expect(t.store.pruneModels('cam', 1)).toEqual([later[3], later[4]]);
    expect(ids()).toEqual([first]);
    expect(t.store.pruneModels('cam', 1)).toEqual([]);
  });

  it('refuses to delete the active model, and activating another camera\'s model', () => {
    const mine = t.store.insertModel(model(10), { activate: true });
    const theirs = t.store.insertModel(model(20, { camera: 'other' }));
    expect(() => t.store.deleteModel(mine)).toThrow(/^id: model \d+ is camera 'cam''s active model; activate another one first$/);
    expect(t.store.getModel(mine)).toBeDefined();
    expect(() => t.store.activateModel('cam', theirs)).toThrow(/^id: camera 'cam' has no model \d+$/);
    expect(() => t.store.activateModel('cam', 999)).toThrow(/^id: camera 'cam' has no model 999$/);
    expect(t.store.activeModelId('cam')).toBe(mine);
    // The database itself refuses too (the foreign key), whatever writes to it.
    // check: SQLite's message for a violated foreign key is "FOREIGN KEY constraint failed" (recalled from memory)
    expect(() => t.store.db.prepare('DELETE FROM models WHERE id = ?').run(mine)).toThrow(/FOREIGN KEY/);
  });

  it('validates the options by name', () => {
    expect(() => t.store.insertModel(model(1), { keep: 0 })).toThrow(/^options\.keep: expected an integer in 1\.\.10000, got 0$/);
    expect(() => t.store.insertModel(model(1, { rejected: 'yes' as unknown as boolean }))).toThrow(/^model\.rejected/);
    expect(() => t.store.pruneModels('cam', 1.5)).toThrow(/^keep: expected an integer/);
    expect(ids()).toEqual([]);
  });
});

describe('migration 2 of a database written before models were kept and chosen', () => {
  let t: TempStore;
  afterEach(() => t.cleanup());

  it('keeps every row and makes each camera\'s newest model its active one', () => {
    t = tempStore();
    const file = join(t.dir, 'old.db');
    // A version-1 database as the previous release wrote it (its own migration, then rows).
    const raw = new Database(file);
    migrate(raw, migrations.slice(0, 1));
    expect(raw.pragma('user_version', { simple: true })).toBe(1);
    raw.prepare("INSERT INTO cameras (id, name, created) VALUES ('door', 'Door', 1), ('hall', 'Hall', 1), ('empty', 'Empty', 1)").run();
    const insert = raw.prepare('INSERT INTO models (camera, created, width, height, components, format_version, data, metadata) VALUES (?, ?, 4, 4, 1, 1, ?, ?)');
    insert.run('door', 100, Buffer.from(bytes(64, 1)), JSON.stringify({ source: 'live source', verdict: 'good' }));
    insert.run('door', 300, Buffer.from(bytes(64, 2)), JSON.stringify({ source: 'live source', verdict: 'fair' }));
    insert.run('door', 200, Buffer.from(bytes(64, 3)), '{}');
    insert.run('hall', 50, Buffer.from(bytes(64, 4)), '{}');
    raw.prepare("INSERT INTO events (time, camera, type, detail) VALUES (5, 'door', 'offline', '{}')").run();
    raw.close();

    const store = openStore(file);
    t.store.close();
    t.store = store;
    expect(store.db.pragma('user_version', { simple: true })).toBe(3);
    const door = store.listModels('door');
    expect(door.map((m) => [m.created, m.active, m.rejected])).toEqual([
      [100, false, false],
      [200, false, false],
      [300, true, false],
    ]);
    expect(door.map((m) => m.metadata)).toEqual([{ source: 'live source', verdict: 'good' }, {}, { source: 'live source', verdict: 'fair' }]);
    expect(store.activeModel('door')?.data).toEqual(bytes(64, 2));
    expect(store.activeModel('hall')?.data).toEqual(bytes(64, 4));
    expect(store.activeModelId('empty')).toBeUndefined();
    expect(store.listCameras().map((c) => c.id)).toEqual(['door', 'empty', 'hall']);
    expect(store.listEvents().map((e) => e.type)).toEqual(['offline']);
    // The integrity and foreign keys of the migrated file hold.
    expect(store.db.pragma('integrity_check', { simple: true })).toBe('ok');
    expect(store.db.pragma('foreign_key_check')).toEqual([]);
  });
});
