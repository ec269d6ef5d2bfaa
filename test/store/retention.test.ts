import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { BUCKET_MS, DEFAULT_RETENTION, SettingKey } from '../../src/store/index.ts';
import { addCameraWithZones, tempStore, type TempStore } from './tempStore.ts';

const DAY = 86_400_000;
const T0 = Date.UTC(2026, 4, 1); // 2026-05-01T00:00Z

describe('retention', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
    addCameraWithZones(t.store);
  });
  afterEach(() => t.cleanup());

  function sampleAt(time: number, value = 1): void {
    t.store.insertSample({ time, camera: 'cam', zone: 'room', value, kind: 'count', intervalMs: 60_000 });
  }

  it('prunes samples before the cutoff rounded down to a quarter hour and keeps every rollup', () => {
    for (let m = 1; m <= 60; m++) sampleAt(T0 + m * 60_000, m % 3);
    const rollups = t.store.listRollups();
    const result = t.store.pruneSamples(T0 + 37 * 60_000 + 123); // rounds down to T0 + 30 min
    // Samples at minutes 1..29 go; the one at minute 30 (time = cutoff, not older) stays.
    expect(result).toEqual({ deleted: 29, cutoff: T0 + 2 * BUCKET_MS });
    const left = t.store.listSamples({ camera: 'cam', zone: 'room' });
    expect(left[0].time).toBe(T0 + 30 * 60_000);
    expect(left).toHaveLength(31);
    expect(t.store.listRollups()).toEqual(rollups);
    expect(t.store.getSetting(SettingKey.samplesPrunedBefore)).toBe(T0 + 2 * BUCKET_MS);
    // Buckets from the horizon on can still be rebuilt exactly from the kept samples.
    t.store.rebuildRollups();
    expect(t.store.listRollups()).toEqual(rollups);
  });

  it('the horizon only moves forward', () => {
    t.store.pruneSamples(T0 + DAY);
    t.store.pruneSamples(T0);
    expect(t.store.samplesPrunedBefore()).toBe(T0 + DAY);
  });

  it('applies the default policy of 30 days', () => {
    expect(DEFAULT_RETENTION.sampleDays).toBe(30);
    sampleAt(T0 + 5 * DAY);
    sampleAt(T0 + 35 * DAY);
    const now = T0 + 40 * DAY;
    expect(t.store.applyRetention({ now })).toEqual({ deleted: 1, cutoff: T0 + 10 * DAY });
    expect(t.store.listSamples({ camera: 'cam', zone: 'room' }).map((s) => s.time)).toEqual([T0 + 35 * DAY]);
    expect(t.store.listRollups()).toHaveLength(2);
    expect(t.store.applyRetention({ now, sampleDays: 2 }).deleted).toBe(1);
    expect(() => t.store.applyRetention({ sampleDays: 0 })).toThrow(/^policy\.sampleDays/);
    expect(() => t.store.pruneSamples(-1)).toThrow(/^olderThanMs/);
  });

  it('keeps rollups until deleted, or rollupDays when given (never less than sampleDays)', () => {
    sampleAt(T0 + 5 * DAY);
    sampleAt(T0 + 50 * DAY);
    sampleAt(T0 + 95 * DAY);
    const now = T0 + 100 * DAY;
    expect(t.store.applyRetention({ now }).rollupsDeleted).toBeUndefined();
    expect(t.store.listRollups()).toHaveLength(3);
    expect(t.store.applyRetention({ now, rollupDays: 60 }).rollupsDeleted).toBe(1);
    expect(t.store.listRollups().map((r) => r.bucketStart)).toEqual([T0 + 50 * DAY - BUCKET_MS, T0 + 95 * DAY - BUCKET_MS].map((b) => Math.floor(b / BUCKET_MS) * BUCKET_MS));
    expect(() => t.store.applyRetention({ now, sampleDays: 30, rollupDays: 10 })).toThrow(/^policy\.rollupDays/);
  });
});
