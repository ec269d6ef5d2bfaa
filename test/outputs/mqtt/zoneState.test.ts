import { describe, expect, it } from 'vitest';
import type { CameraLive, ZoneLive } from '../../../src/counting/cameraPipeline.ts';
import { zoneState } from '../../../src/outputs/mqtt/zoneState.ts';

const T = Date.UTC(2026, 2, 2, 9, 30);
const room = (count: number, capacity?: number): ZoneLive => ({ id: 'tables', name: 'Tables', kind: 'room', count, fill: 0.05, ...(capacity !== undefined && { capacity }) });
const shelf = (fill: number): ZoneLive => ({ id: 'returns', name: 'Returns shelf', kind: 'shelf', count: 3, fill });
const live = (zone: ZoneLive, patch: Partial<CameraLive> = {}): CameraLive => ({ camera: 'hall', name: 'Hall', state: 'online', viewChanged: false, zones: [zone], ...patch });
const state = (zone: ZoneLive, patch: Partial<CameraLive> = {}) => zoneState(live(zone, patch), zone, { time: T }).state;

describe('zoneState', () => {
  it('writes the documented message', () => {
    // check: ISO 8601 UTC as Date.prototype.toISOString prints it (ECMA-262 Date Time String Format)
    expect(zoneState(live(room(8, 10)), room(8, 10), { time: T })).toEqual({
      camera: 'hall',
      cameraName: 'Hall',
      zone: 'tables',
      zoneName: 'Tables',
      kind: 'room',
      count: 8,
      capacity: 10,
      state: 'near',
      time: '2026-03-02T09:30:00.000Z',
    });
    expect(zoneState(live(shelf(0.5)), shelf(0.5), { time: T })).toMatchObject({ kind: 'shelf', fill: 0.5, state: 'ok' });
    expect(zoneState(live(shelf(0.5)), shelf(0.5), { time: T })).not.toHaveProperty('count');
  });

  it('rooms: below under 80 % of capacity, near from 80 % inclusive, over above capacity', () => {
    expect(state(room(7.99, 10))).toBe('below');
    expect(state(room(8, 10))).toBe('near');
    expect(state(room(10, 10))).toBe('near');
    expect(state(room(10.01, 10))).toBe('over');
    expect(state(room(0, 0))).toBe('below');
    expect(state(room(1, 0))).toBe('over');
    expect(state(room(50))).toBe('ok');
  });

  it('shelves: low below lowFill (exclusive), else ok', () => {
    expect(state(shelf(0.19))).toBe('low');
    expect(state(shelf(0.2))).toBe('ok');
    expect(zoneState(live(shelf(0.3)), shelf(0.3), { time: T, lowFill: 0.5 }).state).toBe('low');
  });

  it('learning, offline and view-changed come first and carry no value', () => {
    expect(zoneState(live(room(12, 10), { state: 'learning' }), room(12, 10), { time: T })).toMatchObject({ state: 'learning', count: null });
    for (const s of ['offline', 'connecting', 'stopped'] as const) expect(state(room(12, 10), { state: s })).toBe('offline');
    expect(zoneState(live(shelf(0.1), { viewChanged: true }), shelf(0.1), { time: T })).toMatchObject({ state: 'view-changed', fill: null });
  });
});
