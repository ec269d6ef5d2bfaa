import type Database from 'better-sqlite3';
import { BUCKET_MS } from './rollups.ts';
import { SettingKey, type SettingStore } from './settings.ts';
import { checkEpochMs, checkNumber } from './validate.ts';

/**
 * Retention policy: raw samples are kept {@link DEFAULT_RETENTION}`.sampleDays` days (30 by
 * default) and then pruned; rollups, zones, history, events, models and settings are kept until
 * deleted explicitly. The hourly export reads rollups only, so it keeps working for pruned periods.
 *
 * The prune cutoff is rounded **down** to a rollup bucket boundary (quarter hour), so a pruned
 * sample never shares a bucket with a kept one: every bucket at or after the cutoff can still be
 * rebuilt exactly from the samples (`rebuildRollups`), and buckets before it are left alone. The
 * cutoff is remembered in settings ({@link SettingKey.samplesPrunedBefore}) as the retention
 * horizon. Pruning runs as one transaction; a day of 5-second samples for ten zones is ~170 000
 * rows, one DELETE over the `samples_by_time` index.
 */

export const DEFAULT_RETENTION = {
  /** Days raw samples are kept before pruning. */
  sampleDays: 30,
} as const;

export interface RetentionPolicy {
  /** Days raw samples are kept, ≥ 1 (fractions allowed); default 30. */
  readonly sampleDays?: number;
  /**
   * Days hourly rollups are kept (fractions allowed), at least `sampleDays`; default: kept until
   * deleted. Rollups older than that are deleted by whole 15-minute buckets.
   */
  readonly rollupDays?: number;
  /** "Now" for the policy, UTC epoch ms; default the store's clock. */
  readonly now?: number;
}

export interface PruneResult {
  /** Samples deleted. */
  readonly deleted: number;
  /** Rollup rows deleted (applyRetention with rollupDays only; else 0). */
  readonly rollupsDeleted?: number;
  /** Samples with time < cutoff are gone; UTC epoch ms, a multiple of 15 minutes. */
  readonly cutoff: number;
}

export interface RetentionStore {
  /** Deletes samples with time < olderThanMs rounded down to a quarter hour; rollups are kept. */
  pruneSamples(olderThanMs: number): PruneResult;
  /** Prunes by policy: samples older than now − sampleDays days. */
  applyRetention(policy?: RetentionPolicy): PruneResult;
  /** Cutoff of the latest prune (0 when never pruned), UTC epoch ms. */
  samplesPrunedBefore(): number;
}

export function prepareRetention(db: Database.Database, settings: SettingStore, clock: () => number): RetentionStore {
  const remove = db.prepare('DELETE FROM samples WHERE time < ?');
  const removeRollups = db.prepare('DELETE FROM rollups WHERE bucket_start < ?');
  const horizon = (): number => {
    const value = settings.getSetting(SettingKey.samplesPrunedBefore);
    return typeof value === 'number' ? value : 0;
  };
  const prune = db.transaction((cutoff: number): PruneResult => {
    const deleted = remove.run(cutoff).changes;
    if (cutoff > horizon()) settings.setSetting(SettingKey.samplesPrunedBefore, cutoff);
    return { deleted, cutoff };
  });
  const store: RetentionStore = {
    pruneSamples(olderThanMs) {
      const cutoff = Math.floor(checkEpochMs(olderThanMs, 'olderThanMs') / BUCKET_MS) * BUCKET_MS;
      return prune.immediate(cutoff);
    },
    applyRetention(policy = {}) {
      const { sampleDays = DEFAULT_RETENTION.sampleDays, rollupDays, now = clock() } = policy;
      const days = checkNumber(sampleDays, 'policy.sampleDays', 1, 1_000_000);
      const at = checkEpochMs(now, 'policy.now');
      const result = store.pruneSamples(Math.max(0, at - Math.round(days * 86_400_000)));
      if (rollupDays === undefined) return result;
      const keep = checkNumber(rollupDays, 'policy.rollupDays', days, 1_000_000);
      const cutoff = Math.floor(Math.max(0, at - Math.round(keep * 86_400_000)) / BUCKET_MS) * BUCKET_MS;
      return { ...result, rollupsDeleted: removeRollups.run(cutoff).changes };
    },
    samplesPrunedBefore: horizon,
  };
  return store;
}
