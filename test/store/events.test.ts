import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { EventType } from '../../src/store/index.ts';
import { addCameraWithZones, tempStore, type TempStore } from './tempStore.ts';

describe('events', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore({ clock: () => 777 });
    addCameraWithZones(t.store);
  });
  afterEach(() => t.cleanup());

  it('stores camera and zone events with JSON detail and filters them', () => {
    t.store.insertEvent({ time: 10, camera: 'cam', type: EventType.offline, detail: { reason: 'timeout' } });
    t.store.insertEvent({ time: 20, camera: 'cam', type: EventType.online });
    t.store.insertEvent({ time: 30, camera: 'cam', zone: 'room', type: EventType.capacityExceeded, detail: { count: 7, capacity: 6 } });
    t.store.insertEvent({ camera: 'cam', type: EventType.viewChanged });
    const all = t.store.listEvents();
    expect(all.map((e) => [e.time, e.type, e.zone])).toEqual([
      [10, 'offline', null],
      [20, 'online', null],
      [30, 'capacity-exceeded', 'room'],
      [777, 'view-changed', null],
    ]);
    expect(all[0].detail).toEqual({ reason: 'timeout' });
    expect(all[1].detail).toEqual({});
    expect(t.store.listEvents({ from: 15, to: 31 }).map((e) => e.time)).toEqual([20, 30]);
    expect(t.store.listEvents({ type: EventType.offline }).length).toBe(1);
    expect(t.store.listEvents({ limit: 2 }).length).toBe(2);
  });

  it('refuses unknown types, cameras and zones', () => {
    expect(() => t.store.insertEvent({ camera: 'cam', type: 'exploded' as EventType })).toThrow(/^event\.type: expected one of/);
    expect(() => t.store.insertEvent({ camera: 'nope', type: EventType.online })).toThrow(/FOREIGN KEY/);
    expect(() => t.store.insertEvent({ camera: 'cam', zone: 'nope', type: EventType.online })).toThrow(/FOREIGN KEY/);
  });
});
