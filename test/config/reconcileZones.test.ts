import { describe, expect, it } from 'vitest';
import { describeZoneChange, reconcileZones } from '../../src/config/reconcileZones.ts';
import type { Zone } from '../../src/domain/zone.ts';

// Hand-made zones; the rule under test is ours (README, "Zones: the file seeds, the dashboard wins").
const square: Zone['polygon'] = [[0, 0], [0.5, 0], [0.5, 0.5], [0, 0.5]];
const drawn: Zone['polygon'] = [[0.1, 0.1], [0.6, 0.1], [0.6, 0.6], [0.1, 0.6]];
const zone = (id: string, extra: Partial<Zone> = {}): Zone => ({ id, kind: 'room', polygon: square, ...extra });

describe('reconcileZones', () => {
  it('seeds from the file when the database has no zones', () => {
    const r = reconcileZones({ config: [zone('a')], lastConfig: undefined, stored: [] });
    expect(r).toEqual({ zones: [zone('a')], changes: [], basis: 'seeded' });
  });

  it('keeps the stored zones of a database that never recorded the file', () => {
    const r = reconcileZones({ config: [zone('a', { capacity: 3 })], lastConfig: undefined, stored: [zone('a', { capacity: 9 })] });
    expect(r.zones).toEqual([zone('a', { capacity: 9 })]);
    expect(r.basis).toBe('stored');
  });

  it('applies a changed field on top of the dashboard’s other fields', () => {
    const r = reconcileZones({
      config: [zone('a', { capacity: 8 })],
      lastConfig: [zone('a', { capacity: 6 })],
      stored: [zone('a', { capacity: 6, polygon: drawn, name: 'Door' })],
    });
    expect(r.zones).toEqual([zone('a', { capacity: 8, polygon: drawn, name: 'Door' })]);
    expect(r.changes.map(describeZoneChange)).toEqual(['a capacity 6 → 8']);
  });

  it('adds and removes zones the file added and removed; a field dropped from the file is unset', () => {
    const r = reconcileZones({
      config: [zone('a'), zone('c')],
      lastConfig: [zone('a', { threshold: 4 }), zone('b')],
      stored: [zone('a', { threshold: 4 }), zone('b'), zone('d')],
    });
    expect(r.zones.map((z) => z.id)).toEqual(['a', 'd', 'c']);
    expect(r.zones[0]).toEqual(zone('a'));
    expect(r.changes.map(describeZoneChange)).toEqual(['a threshold 4 → unset', 'zone c added', 'zone b removed']);
  });

  it('does not bring back a zone the dashboard removed when the file changes one of its fields', () => {
    const r = reconcileZones({ config: [zone('a', { capacity: 2 }), zone('b')], lastConfig: [zone('a'), zone('b')], stored: [zone('b')] });
    expect(r.zones.map((z) => z.id)).toEqual(['b']);
    expect(r.changes.map(describeZoneChange)).toEqual(['a capacity unset → 2 (not applied: the zone was removed in the dashboard)']);
  });
});
