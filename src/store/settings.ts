import type Database from 'better-sqlite3';
import { checkText, toJson } from './validate.ts';

/**
 * Settings: a key → JSON value table for whatever must survive a restart (the site time zone the
 * store was opened with, the retention horizon, user preferences). Keys used by the store itself
 * are listed in {@link SettingKey}.
 */
export const SettingKey = {
  /** IANA zone of the site (string), written by `openStore`. */
  timeZone: 'site.timeZone',
  /** Samples before this UTC epoch ms were pruned (number), written by `pruneSamples`. */
  samplesPrunedBefore: 'retention.samplesPrunedBefore',
} as const;
export type SettingKey = (typeof SettingKey)[keyof typeof SettingKey];

export interface SettingStore {
  /** The parsed value, or undefined when the key was never set. */
  getSetting(key: string): unknown;
  /** Stores any JSON-representable value under a key of 1..200 characters. */
  setSetting(key: string, value: unknown): void;
  /** All settings, ordered by key. */
  listSettings(): { key: string; value: unknown; updated: number }[];
}

export function prepareSettings(db: Database.Database, clock: () => number): SettingStore {
  const get = db.prepare('SELECT value FROM settings WHERE key = ?');
  const set = db.prepare(`
    INSERT INTO settings (key, value, updated) VALUES (@key, @value, @time)
    ON CONFLICT (key) DO UPDATE SET value = excluded.value, updated = excluded.updated
  `);
  const list = db.prepare('SELECT key, value, updated FROM settings ORDER BY key');
  return {
    getSetting(key) {
      const row = get.get(checkText(key, 'key')) as { value: string } | undefined;
      return row === undefined ? undefined : (JSON.parse(row.value) as unknown);
    },
    setSetting(key, value) {
      set.run({ key: checkText(key, 'key'), value: toJson(value, `setting ${key}`), time: clock() });
    },
    listSettings() {
      return (list.all() as { key: string; value: string; updated: number }[]).map((r) => ({ ...r, value: JSON.parse(r.value) as unknown }));
    },
  };
}
