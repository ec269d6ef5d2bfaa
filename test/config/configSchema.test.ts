import { describe, expect, it } from 'vitest';
import { ConfigError, validateConfig } from '../../src/config/loadConfig.ts';
import { validateCollectorConfig } from '../../src/outputs/mqtt/collectorConfig.ts';

/** A valid configuration (invented); each case breaks one thing in a copy. */
const base = () => ({
  cameras: [
    {
      id: 'door',
      source: { kind: 'synthetic', scene: 'reading-room' },
      zones: [
        { id: 'in', kind: 'room', polygon: [[0, 0], [0.5, 0], [0.5, 0.5], [0, 0.5]] },
        { id: 'out', kind: 'room', polygon: [[0.5, 0.5], [1, 0.5], [1, 1], [0.5, 1]] },
      ],
    },
  ],
}) as Record<string, any>;

const message = (doc: unknown, validate: (doc: unknown, file: string) => unknown = validateConfig) => {
  try {
    validate(doc, 'config.yaml');
  } catch (error) {
    expect(error).toBeInstanceOf(ConfigError);
    return (error as Error).message;
  }
  throw new Error('expected a ConfigError');
};

describe('validateConfig through the zod schema: messages name the file and the field path', () => {
  it('a zone polygon that crosses itself: the domain check, at the zone list path of the configuration', () => {
    const doc = base();
    // check: a "bow tie" — edge 0 (0.5,0.5)→(1,0.5)… crosses edge 2; worked out by hand.
    doc.cameras[0].zones[1].polygon = [[0.5, 0.5], [1, 1], [1, 0.5], [0.5, 1]];
    expect(message(doc)).toBe('config.yaml: cameras[0].zones[1].polygon is self-intersecting: edge 0 crosses edge 2');
    doc.cameras[0].zones[1].polygon = [[0.5, 0.5], [1, 0.5], [1, 1.5]];
    expect(message(doc)).toBe('config.yaml: cameras[0].zones[1].polygon[2][1] must be a number in 0..1 (y, from the top), got 1.5');
  });

  it('a zone id used twice, and a zone list that is no list', () => {
    const doc = base();
    doc.cameras[0].zones[1].id = 'in';
    expect(message(doc)).toBe('config.yaml: cameras[0].zones[1].id "in" is used twice');
    doc.cameras[0].zones = 'all';
    expect(message(doc)).toBe('config.yaml: cameras[0].zones must be a list of zones');
  });

  it('a misspelt key is named before the fields it leaves out', () => {
    const doc = base();
    doc.cameras[0].ID = doc.cameras[0].id;
    delete doc.cameras[0].id;
    expect(message(doc)).toMatch(/^config\.yaml: cameras\[0\]\.ID is not a known setting here \(known: id, name, source, size, /);
  });

  it('a source that is no mapping, and a source key of another kind', () => {
    const doc = base();
    doc.cameras[0].source = 'synthetic';
    expect(message(doc)).toBe('config.yaml: cameras[0].source.kind must be one of drop-folder, snapshot, mjpeg, ffmpeg, synthetic, got nothing');
    doc.cameras[0].source = { kind: 'synthetic', scene: 'reading-room', url: 'http://192.0.2.1/' };
    expect(message(doc)).toMatch(/^config\.yaml: cameras\[0\]\.source\.url is not a known setting here \(known: kind, scene, speed, seed, colour\)/);
  });

  it('rollups kept shorter than samples, naming the lower bound the samples set', () => {
    const doc = { ...base(), storage: { sampleRetentionDays: 90, rollupRetentionDays: 30 } };
    expect(message(doc)).toBe('config.yaml: storage.rollupRetentionDays must be a whole number from 90 to 36500, got 30');
  });

  it('an empty section (null in YAML) means its defaults, as before', () => {
    const config = validateConfig({ ...base(), site: { name: 'x', timeZone: 'UTC' }, server: null, models: null, storage: { sampleRetentionDays: null } }, 'config.yaml');
    expect(config.server).toEqual({ host: '127.0.0.1', port: 8080, viewToken: false });
    expect(config.models).toEqual({ keep: 5 });
    expect(config.storage).toEqual({ sampleRetentionDays: 30 });
    expect(config.cameras[0]).toMatchObject({ name: 'door', learnSeconds: 30, sampleSeconds: 10, threshold: 3, smoothing: { window: 5, method: 'median' } });
  });

  it('the collector: storage.url without a database, and a publisher-only mqtt key', () => {
    expect(message({ storage: { url: 'postgres://u@db.example.net' }, mqtt: { url: 'mqtt://h' } }, validateCollectorConfig)).toBe(
      'config.yaml: storage.url must name a database (postgres://user@host:5432/db)',
    );
    expect(message({ mqtt: { url: 'mqtt://h', discovery: true } }, validateCollectorConfig)).toMatch(/^config\.yaml: mqtt\.discovery is not a known setting here/);
  });
});
