import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { QualityFlag, type Sample } from '../../src/store/index.ts';
import { addCameraWithZones, tempStore, type TempStore } from './tempStore.ts';

const T0 = Date.UTC(2026, 2, 1, 12); // 2026-03-01T12:00Z, a bucket boundary

function room(time: number, value: number, intervalMs = 5000, quality = 0): Sample {
  return { time, camera: 'cam', zone: 'room', value, kind: 'count', intervalMs, quality };
}

describe('samples', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
    addCameraWithZones(t.store);
  });
  afterEach(() => t.cleanup());

  it('stores samples and reads them back in time order', () => {
    t.store.insertSample(room(T0 + 10_000, 2.5));
    t.store.insertSample(room(T0 + 5000, 1, 5000, QualityFlag.viewChanged | QualityFlag.modelStale));
    t.store.insertSample({ time: T0 + 5000, camera: 'cam', zone: 'shelf', value: 0.4, kind: 'fill', intervalMs: 5000 });
    const rows = t.store.listSamples({ camera: 'cam', zone: 'room' });
    expect(rows.map((r) => [r.time, r.value, r.quality])).toEqual([
      [T0 + 5000, 1, 3],
      [T0 + 10_000, 2.5, 0],
    ]);
    expect(t.store.lastSample('cam', 'room')?.time).toBe(T0 + 10_000);
    expect(t.store.lastSample('cam', 'shelf')?.value).toBe(0.4);
    expect(t.store.listSamples({ camera: 'cam', zone: 'room', from: T0 + 6000 }).length).toBe(1);
  });

  it('refuses invalid samples with messages naming the field', () => {
    expect(() => t.store.insertSample(room(1.5, 1))).toThrow(/^sample\.time: /);
    expect(() => t.store.insertSample(room(T0, -1))).toThrow(/^sample\.value: expected a number in 0\.\.1000/);
    expect(() => t.store.insertSample(room(T0, Number.NaN))).toThrow(/^sample\.value/);
    expect(() => t.store.insertSample(room(T0, 1, 0))).toThrow(/^sample\.intervalMs/);
    expect(() => t.store.insertSample(room(T0, 1, 3_600_001))).toThrow(/^sample\.intervalMs/);
    expect(() => t.store.insertSample(room(T0, 1, 5000, 1024))).toThrow(/^sample\.quality/);
    expect(() => t.store.insertSample({ ...room(T0, 1), kind: 'fill' })).toThrow(/^sample\.kind: zone 'cam\/room' is a room zone/);
    expect(() => t.store.insertSample({ ...room(T0, 1), zone: 'nowhere' })).toThrow(/^sample\.zone: no zone 'nowhere'/);
    expect(() => t.store.insertSample({ ...room(T0, 1), camera: 'bad id!' })).toThrow(/^sample\.camera/);
    expect(() =>
      t.store.insertSample({ time: T0, camera: 'cam', zone: 'shelf', value: 1.5, kind: 'fill', intervalMs: 5000 }),
    ).toThrow(/^sample\.value: expected a number in 0\.\.1/);
    expect(t.store.listSamples({ camera: 'cam', zone: 'room' })).toEqual([]);
  });

  it('refuses a sample whose interval overlaps a stored one, in either direction', () => {
    t.store.insertSample(room(T0 + 10_000, 1)); // covers [T0+5s, T0+10s)
    expect(() => t.store.insertSample(room(T0 + 10_000, 2))).toThrow(/overlaps/);
    expect(() => t.store.insertSample(room(T0 + 6000, 2, 1000))).toThrow(/overlaps/); // inside
    expect(() => t.store.insertSample(room(T0 + 12_000, 2, 3000))).toThrow(/overlaps/); // starts 1 s before its end
    expect(() => t.store.insertSample(room(T0 + 5001, 2, 5000))).toThrow(/overlaps/); // ends 1 ms after its start
    t.store.insertSample(room(T0 + 5000, 2, 5000)); // touching at the start: fine
    t.store.insertSample(room(T0 + 15_000, 3, 5000)); // touching at the end: fine
    expect(t.store.listSamples({ camera: 'cam', zone: 'room' }).map((s) => s.value)).toEqual([2, 1, 3]);
  });

  it('a batch is one transaction: one bad sample stores none of it and no rollups', () => {
    expect(() => t.store.insertSamples([room(T0 + 5000, 1), room(T0 + 10_000, 2), room(T0 + 10_000, 3)])).toThrow(
      /^samples\[2\]\.time: .*overlaps/,
    );
    expect(t.store.listSamples({ camera: 'cam', zone: 'room' })).toEqual([]);
    expect(t.store.listRollups()).toEqual([]);
    expect(t.store.insertSamples([room(T0 + 5000, 1), room(T0 + 10_000, 2)])).toBe(2);
    expect(t.store.listRollups()).toHaveLength(1);
  });

  it('refuses samples for a removed zone', () => {
    t.store.removeZone('cam', 'room', { time: 5 });
    expect(() => t.store.insertSample(room(T0, 1))).toThrow(/was removed/);
  });

  it('takes the interval that was open when its zone was removed, and none that began later', () => {
    // The camera thread writes the open interval just after the dashboard removed the zone.
    t.store.removeZone('cam', 'room', { time: T0 + 3000 });
    t.store.insertSample(room(T0 + 4000, 1, 2000));
    expect(t.store.listSamples({ camera: 'cam', zone: 'room' }).map((s) => s.time)).toEqual([T0 + 4000]);
    expect(() => t.store.insertSample(room(T0 + 6000, 1, 2000))).toThrow(/was removed at .* before this interval began/);
  });
});
