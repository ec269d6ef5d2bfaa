import { createHash } from 'node:crypto';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { DateTime } from 'luxon';
import { afterEach, describe, expect, it } from 'vitest';
import { stringify } from 'yaml';
import { ConfigError, loadConfig } from '../../src/config/loadConfig.ts';
import { openStore } from '../../src/store/index.ts';
import { repoRoot, spawnResiduum } from './spawnResiduum.ts';

const dirs: string[] = [];
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});
function tempDir(): string {
  const dir = mkdtempSync(join(tmpdir(), 'residuum-config-'));
  dirs.push(dir);
  return dir;
}

/** A valid configuration; each case below breaks one thing in a copy. */
function base(): Record<string, any> {
  return {
    site: { name: 'Test site', timeZone: 'Europe/Berlin' },
    storage: { sampleRetentionDays: 30 },
    server: { host: '127.0.0.1', port: 0 },
    cameras: [
      {
        id: 'reading-room',
        name: 'Reading room',
        source: { kind: 'synthetic', scene: 'reading-room', speed: 1 },
        size: [320, 240],
        sampleSeconds: 10,
        zones: [{ id: 'entrance', kind: 'room', polygon: [[0.04, 0.6], [0.3, 0.6], [0.3, 0.98], [0.04, 0.98]] }],
      },
    ],
  };
}

function write(doc: unknown, name = 'site.yaml'): string {
  const file = join(tempDir(), name);
  writeFileSync(file, typeof doc === 'string' ? doc : stringify(doc));
  return file;
}

/** loadConfig(file) throws a ConfigError whose message starts with the file and names the field. */
function expectConfigError(file: string, field: string, says: string): void {
  let error: unknown;
  try {
    loadConfig(file);
  } catch (e) {
    error = e;
  }
  expect(error, `${field}: loadConfig did not throw`).toBeInstanceOf(ConfigError);
  const message = (error as Error).message;
  expect(message.startsWith(`${file}: `), message).toBe(true);
  expect(message).toContain(`${field} `);
  expect(message).toContain(says);
}

describe('loadConfig refuses a bad configuration file, naming the file and the field', () => {
  // check: README "Configuration file" — unknown keys are errors; every message names the file and the field.
  it('the valid base configuration loads (so each case below fails for its one change)', () => {
    const config = loadConfig(write(base()));
    expect(config.cameras.map((c) => c.id)).toEqual(['reading-room']);
  });

  it('an unknown top-level key', () => {
    const doc = base();
    doc.sites = doc.site;
    expectConfigError(write(doc), 'sites', 'is not a known setting');
  });

  it('a misspelt camera key', () => {
    const doc = base();
    doc.cameras[0].sampleSecond = 5;
    expectConfigError(write(doc), 'cameras[0].sampleSecond', 'is not a known setting');
    const typo = base();
    typo.cameras[0].zone = typo.cameras[0].zones;
    delete typo.cameras[0].zones;
    expectConfigError(write(typo), 'cameras[0].zone', 'is not a known setting');
  });

  it('a bad source kind, and a source without kind', () => {
    const doc = base();
    doc.cameras[0].source = { kind: 'usb', device: '/dev/video0' };
    expectConfigError(write(doc), 'cameras[0].source.kind', 'must be one of drop-folder, snapshot, mjpeg, ffmpeg, synthetic, got "usb"');
    const none = base();
    none.cameras[0].source = { scene: 'reading-room' };
    expectConfigError(write(none), 'cameras[0].source.kind', 'must be one of');
  });

  it('a snapshot URL that is not http: or https:', () => {
    // check: WHATWG URL — ftp: and file: parse as URLs with other schemes; "192.0.2.10/snap.jpg" does not parse.
    for (const url of ['ftp://192.0.2.10/snapshot.jpg', 'file:///tmp/snapshot.jpg', '192.0.2.10/snapshot.jpg']) {
      const doc = base();
      doc.cameras[0].source = { kind: 'snapshot', url };
      expectConfigError(write(doc), 'cameras[0].source.url', `must be an http: or https: URL, got ${JSON.stringify(url)}`);
    }
    const ok = base();
    ok.cameras[0].source = { kind: 'snapshot', url: 'https://192.0.2.10/snapshot.jpg' };
    ok.cameras[0].model = 'door.rsdm';
    expect(loadConfig(write(ok)).cameras[0].source.kind).toBe('snapshot');
  });

  it('implausible numbers, naming the range (issue: 5e-324 and 1e308 were taken)', () => {
    const threshold = base();
    threshold.cameras[0].threshold = 5e-324;
    expectConfigError(write(threshold), 'cameras[0].threshold', 'must be a number from 0.5 to 50, got 5e-324');
    const area = base();
    area.cameras[0].zones[0].personArea = 1e308;
    expectConfigError(write(area), 'cameras[0].zones[0].personArea', 'must be a fraction of the frame area from 0.00005 to 0.5, got 1e+308');
    const blob = base();
    blob.cameras[0].zones[0].minBlobArea = 5e-324;
    expectConfigError(write(blob), 'cameras[0].zones[0].minBlobArea', 'from 0.00001 to 0.5');
  });

  it('a size that is not [width, height]', () => {
    for (const size of [[320], [320, 240, 1], '320x240', 320]) {
      const doc = base();
      doc.cameras[0].size = size;
      expectConfigError(write(doc), 'cameras[0].size', 'must be [width, height] in pixels');
    }
    const negative = base();
    negative.cameras[0].size = [320, -240];
    expectConfigError(write(negative), 'cameras[0].size[1]', 'must be a whole number');
  });

  it('a time zone that is not an IANA zone', () => {
    // check: IANA tz database as luxon reads it — neither name is a zone
    for (const zone of ['Europe/Berln', 'Mars/Olympus_Mons']) expect(DateTime.now().setZone(zone).isValid).toBe(false);
    // 'CEST' is an abbreviation, not an IANA zone id (common practice); 2 is not text
    for (const zone of ['Europe/Berln', 'Mars/Olympus_Mons', 'CEST', 2]) {
      const doc = base();
      doc.site.timeZone = zone;
      expectConfigError(write(doc), 'site.timeZone', 'must be an IANA time zone');
    }
    const ok = base();
    ok.site.timeZone = 'America/Argentina/Buenos_Aires';
    expect(DateTime.now().setZone('America/Argentina/Buenos_Aires').isValid).toBe(true); // check: luxon
    expect(loadConfig(write(ok)).site.timeZone).toBe('America/Argentina/Buenos_Aires');
  });

  it('a zone polygon with 2 points: the zones validator message with the cameras[0].zones[0].polygon path', () => {
    const doc = base();
    doc.cameras[0].zones[0].polygon = [[0.1, 0.1], [0.9, 0.9]];
    const file = write(doc);
    expectConfigError(file, 'cameras[0].zones[0].polygon', 'needs at least 3 points, got 2');
    expect(() => loadConfig(file)).toThrow(`${file}: cameras[0].zones[0].polygon needs at least 3 points, got 2`);
  });

  it('a camera id used twice', () => {
    const doc = base();
    doc.cameras.push({ ...doc.cameras[0], name: 'Second' });
    expectConfigError(write(doc), 'cameras[1].id', '"reading-room" is used twice');
  });

  it('a negative sampleSeconds', () => {
    const doc = base();
    doc.cameras[0].sampleSeconds = -5;
    expectConfigError(write(doc), 'cameras[0].sampleSeconds', 'must be a number from 1 to 3600, got -5');
  });

  it('models.keep out of 1..50, not a whole number, or a misspelt key; 5 by default', () => {
    expect(loadConfig(write(base())).models).toEqual({ keep: 5 });
    const keep = (value: unknown) => {
      const doc = base();
      doc.models = { keep: value };
      return write(doc);
    };
    expect(loadConfig(keep(1)).models).toEqual({ keep: 1 });
    expect(loadConfig(keep(50)).models).toEqual({ keep: 50 });
    expectConfigError(keep(0), 'models.keep', 'must be a whole number from 1 to 50, got 0');
    expectConfigError(keep(51), 'models.keep', 'must be a whole number from 1 to 50, got 51');
    expectConfigError(keep(2.5), 'models.keep', 'must be a whole number from 1 to 50, got 2.5');
    expectConfigError(keep('5'), 'models.keep', 'must be a whole number from 1 to 50, got "5"');
    const typo = base();
    typo.models = { kep: 5 };
    expectConfigError(write(typo), 'models.kep', 'is not a known setting here (known: keep)');
    const list = base();
    list.models = [5];
    expectConfigError(write(list), 'models', 'must be a mapping');
  });

  it('a file that is not YAML, and a missing file', () => {
    const file = write('cameras: [ {id: x\n');
    expect(() => loadConfig(file)).toThrow(ConfigError);
    expect(() => loadConfig(file)).toThrow(`${file}: not valid YAML`);
    const missing = join(tempDir(), 'nothing.yaml');
    expect(() => loadConfig(missing)).toThrow(`${missing}: no such configuration file`);
  });
});

describe('residuum run with a bad configuration', () => {
  const bad = () => {
    const doc = base();
    doc.cameras[0].source = { kind: 'snapshot', url: 'ftp://192.0.2.10/snapshot.jpg' };
    return write(doc, 'bad.yaml');
  };
  const message = (file: string) => `${file}: cameras[0].source.url must be an http: or https: URL, got "ftp://192.0.2.10/snapshot.jpg"`;

  it('exits non-zero with the message on stderr and creates no database', async () => {
    const file = bad();
    const data = join(tempDir(), 'data');
    const run = spawnResiduum(['run', '--config', file, '--data', data]);
    const { code } = await run.exit(120_000);
    expect(code).toBe(1); // check: README "Exit codes: … 1 failed (the message names the file or field)"
    expect(run.stderr().toString('utf8')).toContain(message(file));
    expect(existsSync(data)).toBe(false);
  });

  it('leaves an existing database byte for byte as it was', async () => {
    const file = bad();
    const data = tempDir();
    const db = join(data, 'residuum.db');
    const store = openStore(db, { timeZone: 'UTC' });
    store.upsertCamera({ id: 'reading-room', name: 'Reading room' }, { time: 1_000 });
    store.close(); // a clean close checkpoints the WAL into the file and removes -wal and -shm
    const before = readdirSync(data).sort();
    const hash = createHash('sha256').update(readFileSync(db)).digest('hex');
    const run = spawnResiduum(['run', '--config', file, '--data', data]);
    expect((await run.exit(120_000)).code).toBe(1);
    expect(run.stderr().toString('utf8')).toContain(message(file));
    expect(readdirSync(data).sort()).toEqual(before);
    expect(createHash('sha256').update(readFileSync(db)).digest('hex')).toBe(hash);
  });
});

describe('config/demo.yaml', () => {
  it('loads without error', () => {
    // check of our own file: the demo that `npm start` and the README point to
    const config = loadConfig(join(repoRoot, 'config/demo.yaml'));
    expect(config.site.timeZone).toBe('Europe/Berlin');
    expect(config.cameras.map((c) => c.id)).toEqual(['reading-room', 'stock-room']);
    expect(config.cameras[0].zones.map((z) => z.id)).toEqual(['entrance', 'stacks', 'tables']);
    expect(config.cameras[1].zones.map((z) => z.kind)).toEqual(['shelf', 'shelf', 'shelf']);
    for (const camera of config.cameras) expect(camera.source).toMatchObject({ kind: 'synthetic', size: { width: 320, height: 240 } });
    expect(config.models).toEqual({ keep: 5 });
  });
});
