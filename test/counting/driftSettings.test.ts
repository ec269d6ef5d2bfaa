import { afterEach, describe, expect, it } from 'vitest';
import { ConfigError, validateConfig } from '../../src/config/loadConfig.ts';
import { parseZones, ZoneError } from '../../src/counting/parseZones.ts';
import { tempStore, type TempStore } from '../store/tempStore.ts';

// The settings of drift adaptation at the edges: the zones file (absorbSeconds), the zone store
// (zone JSON stored whole) and the camera configuration (adaptToDrift). Messages name the file and field.

const square = '[[0.1, 0.1], [0.5, 0.1], [0.5, 0.5], [0.1, 0.5]]';

describe('absorbSeconds in the zones file', () => {
  it('is kept when given and absent by default', () => {
    const [shelf, room] = parseZones(`zones:\n  - { id: top, kind: shelf, polygon: ${square}, absorbSeconds: 600 }\n  - { id: hall, kind: room, polygon: ${square} }\n`, 'zones.yaml');
    expect(shelf.absorbSeconds).toBe(600);
    expect('absorbSeconds' in room).toBe(false);
  });

  it('must be a number of seconds from 1 to a week, with the file and field named', () => {
    for (const bad of ['0', '-5', '604801', '"ten"', 'true']) {
      const text = `zones:\n  - { id: top, kind: shelf, polygon: ${square} }\n  - { id: low, kind: shelf, polygon: ${square}, absorbSeconds: ${bad} }\n`;
      expect(() => parseZones(text, 'zones.yaml')).toThrow(ZoneError);
      expect(() => parseZones(text, 'zones.yaml')).toThrow(/^zones\.yaml: zones\[1\]\.absorbSeconds must be a number of seconds from 1 to 604800/);
    }
    expect(parseZones(`[{ id: a, kind: room, polygon: ${square}, absorbSeconds: 1 }]`)[0].absorbSeconds).toBe(1);
    expect(parseZones(`[{ id: a, kind: room, polygon: ${square}, absorbSeconds: 604800 }]`)[0].absorbSeconds).toBe(604800);
  });
});

describe('absorbSeconds in the zone store', () => {
  let t: TempStore | undefined;
  afterEach(() => t?.cleanup());

  it('is stored with the zone, in its history, and checked', () => {
    t = tempStore();
    t.store.upsertCamera({ id: 'cam' }, { time: 1 });
    const zone = parseZones(`[{ id: top, kind: shelf, polygon: ${square}, absorbSeconds: 300 }]`)[0];
    t.store.upsertZone('cam', zone, { time: 2 });
    expect(t.store.getZone('cam', 'top')?.zone.absorbSeconds).toBe(300);
    const changes = t.store.upsertZone('cam', { ...zone, absorbSeconds: 900 }, { time: 3 });
    expect(changes.map((c) => [c.field, c.old, c.new])).toEqual([['absorbSeconds', 300, 900]]);
    const { absorbSeconds: _, ...withoutAbsorbing } = zone;
    t.store.upsertZone('cam', withoutAbsorbing, { time: 4 });
    expect('absorbSeconds' in t.store.getZone('cam', 'top')!.zone).toBe(false);
    expect(() => t!.store.upsertZone('cam', { ...zone, absorbSeconds: 0 })).toThrow(/zone\.absorbSeconds: expected a number in 1\.\.604800/);
  });
});

describe('adaptToDrift in the camera configuration', () => {
  const config = (camera: Record<string, unknown>) => ({
    cameras: [{ id: 'door', source: { kind: 'synthetic', scene: 'reading-room' }, ...camera }],
  });

  it('is passed on when given and left to the counter default otherwise', () => {
    expect(validateConfig(config({ adaptToDrift: false }), 'site.yaml').cameras[0].adaptToDrift).toBe(false);
    expect(validateConfig(config({ adaptToDrift: true }), 'site.yaml').cameras[0].adaptToDrift).toBe(true);
    expect('adaptToDrift' in validateConfig(config({}), 'site.yaml').cameras[0]).toBe(false);
  });

  it('must be true or false, with the file and field named', () => {
    expect(() => validateConfig(config({ adaptToDrift: 'yes' }), 'site.yaml')).toThrow(ConfigError);
    expect(() => validateConfig(config({ adaptToDrift: 'yes' }), 'site.yaml')).toThrow('site.yaml: cameras[0].adaptToDrift must be true or false, got "yes"');
    expect(() => validateConfig(config({ adaptToDrfit: true }), 'site.yaml')).toThrow(/site\.yaml: cameras\[0\]\.adaptToDrfit is not a known setting here/);
  });
});
