import Database from 'better-sqlite3';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { migrate, openStore, SCHEMA_VERSION, SettingKey, type Migration } from '../../src/store/index.ts';
import { addCameraWithZones, tempStore, type TempStore } from './tempStore.ts';

const TABLES = ['calibration_points', 'cameras', 'events', 'models', 'rollups', 'samples', 'settings', 'zone_history', 'zones'];

function tableNames(db: Database.Database): string[] {
  return (db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").all() as { name: string }[]).map((r) => r.name);
}

describe('openStore', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
  });
  afterEach(() => t.cleanup());

  it('migrates an empty file to the current schema version with all tables', () => {
    expect(SCHEMA_VERSION).toBe(4);
    expect(t.store.db.pragma('user_version', { simple: true })).toBe(SCHEMA_VERSION);
    expect(tableNames(t.store.db)).toEqual(TABLES);
  });

  it('sets WAL, synchronous=NORMAL, foreign keys and a busy timeout', () => {
    const db = t.store.db;
    expect(db.pragma('journal_mode', { simple: true })).toBe('wal');
    // check: SQLite PRAGMA synchronous docs: 0 OFF, 1 NORMAL, 2 FULL, 3 EXTRA (recalled from memory)
    expect(db.pragma('synchronous', { simple: true })).toBe(1);
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1);
    expect(db.pragma('busy_timeout', { simple: true })).toBe(5000);
  });

  it('reopens idempotently: same version, same tables, data kept, migrations not re-run', () => {
    addCameraWithZones(t.store, 1000);
    const before = t.store.db.prepare('SELECT count(*) AS n FROM sqlite_master').get();
    const again = t.reopen();
    expect(again.db.pragma('user_version', { simple: true })).toBe(SCHEMA_VERSION);
    expect(again.db.prepare('SELECT count(*) AS n FROM sqlite_master').get()).toEqual(before);
    expect(migrate(again.db)).toEqual({ from: SCHEMA_VERSION, to: SCHEMA_VERSION });
    expect(again.listCameras()).toEqual([{ id: 'cam', name: 'Camera', created: 1000 }]);
    expect(again.listZones().map((z) => z.zone.id)).toEqual(['room', 'shelf']);
  });

  it('refuses a database written by a newer schema', () => {
    t.store.close();
    const raw = new Database(t.file);
    raw.pragma('user_version = 99');
    raw.close();
    expect(() => t.reopen()).toThrow(/schema version 99 is newer/);
  });

  it('stores the site time zone and reuses it when reopened without one', () => {
    expect(t.store.timeZone).toBe('UTC');
    expect(t.reopen({ timeZone: 'Asia/Kolkata' }).timeZone).toBe('Asia/Kolkata');
    expect(t.store.getSetting(SettingKey.timeZone)).toBe('Asia/Kolkata');
    expect(t.reopen({}).timeZone).toBe('Asia/Kolkata');
    expect(() => t.reopen({ timeZone: 'Mars/Olympus' })).toThrow(/options\.timeZone: unknown IANA time zone/);
  });

  it('validates options by name', () => {
    expect(() => openStore(join(t.dir, 'x.db'), { busyTimeoutMs: -1 })).toThrow(/options\.busyTimeoutMs/);
    expect(() => openStore('')).toThrow(/^file:/);
  });

  it('creates a missing parent directory', () => {
    const file = join(t.dir, 'deep', 'er', 'store.db');
    const s = openStore(file);
    s.close();
    expect(existsSync(file)).toBe(true);
  });

  it('a committed sample is in the WAL and visible to another connection before close', () => {
    addCameraWithZones(t.store);
    t.store.insertSample({ time: 60_000, camera: 'cam', zone: 'room', value: 1, kind: 'count', intervalMs: 5000 });
    expect(existsSync(`${t.file}-wal`)).toBe(true);
    const other = new Database(t.file, { readonly: true });
    try {
      expect(other.prepare('SELECT count(*) AS n FROM samples').get()).toEqual({ n: 1 });
      expect(other.prepare('SELECT count(*) AS n FROM rollups').get()).toEqual({ n: 1 });
    } finally {
      other.close();
    }
  });

  it('settings round trip JSON values', () => {
    t.store.setSetting('ui.theme', { dark: true, accents: ['a', 'b'] });
    expect(t.store.getSetting('ui.theme')).toEqual({ dark: true, accents: ['a', 'b'] });
    expect(t.store.getSetting('missing')).toBeUndefined();
    expect(() => t.store.setSetting('x', undefined)).toThrow(/cannot be stored as JSON/);
  });
});

describe('migrate', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
  });
  afterEach(() => t.cleanup());

  const list: Migration[] = [
    { version: 1, description: 'log table', up: 'CREATE TABLE log (what TEXT NOT NULL)' },
    { version: 2, description: 'log a row', up: "INSERT INTO log VALUES ('m2')" },
  ];

  it('runs migrations in order once, then is a no-op', () => {
    const db = new Database(join(t.dir, 'raw.db'));
    try {
      expect(migrate(db, list)).toEqual({ from: 0, to: 2 });
      expect(migrate(db, list)).toEqual({ from: 2, to: 2 });
      expect(db.prepare('SELECT count(*) AS n FROM log').get()).toEqual({ n: 1 });
    } finally {
      db.close();
    }
  });

  it('a failing migration rolls back to the previous version', () => {
    const db = new Database(join(t.dir, 'raw.db'));
    try {
      const bad = [list[0], { version: 2, description: 'broken', up: 'CREATE TABLE half (a); INSERT INTO nowhere VALUES (1)' }];
      expect(() => migrate(db, bad)).toThrow(/nowhere/);
      expect(db.pragma('user_version', { simple: true })).toBe(1);
      expect(tableNames(db)).toEqual(['log']);
    } finally {
      db.close();
    }
  });

  it('refuses a list with a gap in versions', () => {
    const db = new Database(join(t.dir, 'raw.db'));
    try {
      expect(() => migrate(db, [list[1]])).toThrow(/migrations\[0\]\.version: expected 1, got 2/);
    } finally {
      db.close();
    }
  });
});
