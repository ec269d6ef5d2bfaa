import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { Zone } from '../../src/domain/zone.ts';
import { tempStore, type TempStore } from './tempStore.ts';

const polygon: Zone['polygon'] = [
  [0.1, 0.1],
  [0.9, 0.1],
  [0.5, 0.9],
];

describe('zones', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
    t.store.upsertCamera({ id: 'cam' }, { time: 1 });
  });
  afterEach(() => t.cleanup());

  it('records creation, each changed field old → new, and removal', () => {
    const created = t.store.upsertZone('cam', { id: 'desk', kind: 'room', polygon, capacity: 4 }, { time: 100 });
    expect(created).toEqual([{ time: 100, camera: 'cam', zone: 'desk', field: '*', old: null, new: { id: 'desk', kind: 'room', polygon, capacity: 4 } }]);

    const changed = t.store.upsertZone('cam', { id: 'desk', name: 'Front desk', kind: 'room', polygon, capacity: 6 }, { time: 200 });
    expect(changed).toEqual([
      { time: 200, camera: 'cam', zone: 'desk', field: 'name', old: null, new: 'Front desk' },
      { time: 200, camera: 'cam', zone: 'desk', field: 'capacity', old: 4, new: 6 },
    ]);
    // Same settings again: nothing recorded, `updated` unchanged.
    expect(t.store.upsertZone('cam', { capacity: 6, name: 'Front desk', kind: 'room', id: 'desk', polygon }, { time: 300 })).toEqual([]);
    expect(t.store.getZone('cam', 'desk')).toMatchObject({ created: 100, updated: 200, removed: null, zone: { name: 'Front desk', capacity: 6 } });

    expect(t.store.removeZone('cam', 'desk', { time: 400 })).toBe(true);
    expect(t.store.removeZone('cam', 'desk', { time: 401 })).toBe(false);
    expect(t.store.listZones()).toEqual([]);
    expect(t.store.listZones({ includeRemoved: true })[0].removed).toBe(400);

    const history = t.store.zoneHistory('cam', 'desk');
    expect(history.map((h) => [h.time, h.field])).toEqual([
      [100, '*'],
      [200, 'name'],
      [200, 'capacity'],
      [400, '*'],
    ]);
    expect(history[3].old).toEqual({ id: 'desk', name: 'Front desk', kind: 'room', polygon, capacity: 6 });
    expect(history[3].new).toBeNull();

    // Adding it again brings it back.
    t.store.upsertZone('cam', { id: 'desk', kind: 'room', polygon }, { time: 500 });
    expect(t.store.getZone('cam', 'desk')?.removed).toBeNull();
    expect(t.store.zoneHistory('cam').map((h) => h.time)).toEqual([100, 200, 200, 400, 500]);
  });

  it('polygon changes are recorded with both vertex lists', () => {
    t.store.upsertZone('cam', { id: 'shelf-1', kind: 'shelf', polygon }, { time: 1 });
    const moved: Zone['polygon'] = [
      [0, 0],
      [1, 0],
      [1, 1],
      [0, 1],
    ];
    expect(t.store.upsertZone('cam', { id: 'shelf-1', kind: 'shelf', polygon: moved }, { time: 2 })).toEqual([
      { time: 2, camera: 'cam', zone: 'shelf-1', field: 'polygon', old: polygon, new: moved },
    ]);
  });

  it('refuses a kind change, an unknown camera and malformed zones by field', () => {
    t.store.upsertZone('cam', { id: 'a', kind: 'room', polygon });
    expect(() => t.store.upsertZone('cam', { id: 'a', kind: 'shelf', polygon })).toThrow(/^zone\.kind: zone 'cam\/a' is a room zone/);
    expect(() => t.store.upsertZone('nope', { id: 'a', kind: 'room', polygon })).toThrow(/^camera: no camera 'nope'/);
    expect(() => t.store.upsertZone('cam', { id: 'a b', kind: 'room', polygon })).toThrow(/^zone\.id/);
    expect(() => t.store.upsertZone('cam', { id: 'b', kind: 'room', polygon: polygon.slice(0, 2) })).toThrow(/^zone\.polygon/);
    expect(() => t.store.upsertZone('cam', { id: 'b', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1.5]] })).toThrow(/^zone\.polygon\[2\]\[1\]/);
    expect(() => t.store.upsertZone('cam', { id: 'b', kind: 'room', polygon, treshold: 3 } as unknown as Zone)).toThrow(/^zone\.treshold: unknown zone field/);
    expect(t.store.listZones().map((z) => z.zone.id)).toEqual(['a']);
  });
});
