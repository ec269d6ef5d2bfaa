import { mkdirSync, mkdtempSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import Database from 'better-sqlite3';
import sharp from 'sharp';
import { afterEach, describe, expect, it } from 'vitest';
import { saveModel } from '../../src/counting/modelFile.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { imageSignatures, type SignatureHit } from './imageSignatures.ts';
import { spawnResiduum } from './spawnResiduum.ts';
import { testConfig } from './testConfig.ts';
import { waitUntil } from './waitUntil.ts';

// The privacy guarantee (README "Privacy and limits"): Residuum keeps counts, never pictures of
// people; the only image-like data stored is the learned empty scene (the models table).

const size = { width: 320, height: 240 };
/** A frame's pixel count: a stored value this long could hold a frame at one byte per pixel. */
const FRAME_BYTES = size.width * size.height;

const dirs: string[] = [];
const kills: (() => void)[] = [];
afterEach(() => {
  for (const k of kills.splice(0)) k();
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

/** Every file below `dir`, as paths relative to it. */
function filesBelow(dir: string): string[] {
  return readdirSync(dir, { recursive: true, encoding: 'utf8' })
    .filter((p) => statSync(join(dir, p)).isFile())
    .sort();
}

const RSDMODEL = Buffer.from('RSDMODEL', 'latin1');

/** The stored models' bytes (allowed image-like data), read through SQL. */
function modelBlobs(file: string): Buffer[] {
  const db = new Database(file, { readonly: true, fileMustExist: true });
  try {
    return (db.prepare('SELECT data FROM models ORDER BY id').all() as { data: Buffer }[]).map((r) => r.data);
  } finally {
    db.close();
  }
}

/**
 * A hit in a raw database file is allowed only when it is part of a stored model's bytes (the
 * bytes around it occur in a model BLOB: float data can contain FF D8 FF by chance) or lies in the
 * WAL's own headers (salts and checksums). Both windows take 16 or more bytes after the signature,
 * where an image's own header would be; the second one stays within its page when the signature
 * is near the start of an overflow page (after the page's 4-byte pointer).
 */
function unexplained(name: string, bytes: Buffer, models: readonly Buffer[]): SignatureHit[] {
  // check: SQLite file format (sqlite.org/fileformat2.html, "WAL file format"): a 32-byte header
  // whose bytes 8..11 are the page size, then frames of a 24-byte header and one page.
  const pageSize = name.endsWith('-wal') && bytes.length >= 32 ? bytes.readUInt32BE(8) : undefined;
  const inWalHeader = (hit: SignatureHit) => {
    if (pageSize === undefined) return false;
    if (hit.offset < 32) return true;
    const start = (hit.offset - 32) % (24 + pageSize);
    return start < 24 || start + hit.length > 24 + pageSize;
  };
  const inModel = (hit: SignatureHit) =>
    [
      [hit.offset - 16, hit.offset + hit.length + 16],
      [hit.offset, hit.offset + hit.length + 32],
    ].some(([a, b]) => a >= 0 && b <= bytes.length && models.some((m) => m.includes(bytes.subarray(a, b))));
  return imageSignatures(bytes).filter((hit) => !inWalHeader(hit) && !inModel(hit));
}

/** Base64 of the image signatures' first bytes (a frame pasted into a log line or JSON). */
const BASE64_IMAGE = /\/9j\/|iVBORw0KGgo|R0lGOD|UklGR|data:image/;

describe('the scanners themselves', () => {
  it('find images from sharp, in and out of model bytes', async () => {
    const grey = Buffer.alloc(64 * 48, 128);
    const raw = { raw: { width: 64, height: 48, channels: 1 as const } };
    // check: sharp's JPEG, PNG, GIF and WebP encoders write the signatures of their formats
    const encoded = {
      JPEG: await sharp(grey, raw).jpeg().toBuffer(),
      PNG: await sharp(grey, raw).png().toBuffer(),
      GIF: await sharp(grey, raw).gif().toBuffer(),
      WebP: await sharp(grey, raw).webp().toBuffer(),
    };
    const model = Buffer.concat([RSDMODEL, Buffer.alloc(5000, 7), Buffer.from([0xff, 0xd8, 0xff]), Buffer.alloc(5000, 9)]);
    for (const [format, image] of Object.entries(encoded)) {
      expect(imageSignatures(image)[0]).toMatchObject({ format, offset: 0 });
      const file = Buffer.concat([Buffer.alloc(100), model.subarray(0, 3000), image, model.subarray(3000)]);
      expect(unexplained('x.db', file, [model]).map((h) => h.format)).toEqual([format]);
      expect(BASE64_IMAGE.test(image.toString('base64'))).toBe(true);
    }
    expect(unexplained('x.db', Buffer.concat([Buffer.alloc(10), model]), [model])).toEqual([]);
    expect(imageSignatures(Buffer.concat([Buffer.alloc(10), model]))).toHaveLength(1);
  });
});

describe('privacy: the running service keeps no image of people', () => {
  it('scans the data directory, the database content, the logs and the API after counting people', async () => {
    const root = mkdtempSync(join(tmpdir(), 'residuum-privacy-'));
    dirs.push(root);
    const drop = join(root, 'drop');
    const tmp = join(root, 'tmp');
    const dataDir = join(root, 'data');
    mkdirSync(drop);
    mkdirSync(tmp);
    const scene = createScene('reading-room', size);

    // The door camera's model: the empty reading room (as `residuum run` learns a synthetic scene).
    const model = fitSubspace(Array.from({ length: 200 }, (_, i) => scene.emptyFrameAt(i * 15).data), size);
    const modelFile = join(root, 'door.rsdm');
    await saveModel(modelFile, model, { source: 'synthetic:reading-room:empty' });
    const configFile = testConfig(root, {
      extraCameras: [
        {
          id: 'door',
          name: 'Door',
          source: { kind: 'drop-folder', path: drop, scanIntervalMs: 100, settleMs: 0 },
          model: modelFile,
          size: [size.width, size.height],
          sampleSeconds: 1,
          zones: scene.zones.map((z) => ({ ...z })),
        },
      ],
    });

    // Snapshots of frames with at least two people in view, as a camera would upload them.
    const picks: number[] = [];
    for (let t = 0; picks.length < 8 && t < 30_000; t += 25) {
      if (Object.values(scene.frameAt(t).truth).reduce((n, z) => n + z.count, 0) >= 2) picks.push(t);
    }
    expect(picks).toHaveLength(8);
    const snapshots: { name: string; bytes: Buffer }[] = [];
    for (const [i, t] of picks.entries()) {
      const pixels = Buffer.from(Uint8Array.from(scene.frameAt(t).frame.data, (v) => Math.max(0, Math.min(255, Math.round(v)))));
      const image = sharp(pixels, { raw: { ...size, channels: 1 } });
      const png = i % 4 === 3;
      snapshots.push({ name: `snap-${String(i).padStart(3, '0')}.${png ? 'png' : 'jpg'}`, bytes: await (png ? image.png() : image.jpeg({ quality: 90 })).toBuffer() });
    }

    // The service as a process, its working folder and TMPDIR in our temporary tree (tsx's
    // transform cache off), so that anything it writes anywhere it would write lands there.
    const run = spawnResiduum(['run', '--config', configFile, '--data', dataDir, '--port', '0'], {
      cwd: root,
      env: { ...process.env, TMPDIR: tmp, TSX_DISABLE_CACHE: '1' },
    });
    kills.push(() => {
      if (run.child.exitCode === null && run.child.signalCode === null) run.child.kill('SIGKILL');
    });
    const port = Number((await run.waitForOutput(/serving the API at http:\/\/127\.0\.0\.1:(\d+)\//, 300_000))[1]);

    for (const s of snapshots) {
      // Uploaded under a .part name and renamed, as the README asks of uploaders.
      writeFileSync(join(drop, `${s.name}.part`), s.bytes);
      renameSync(join(drop, `${s.name}.part`), join(drop, s.name));
      await new Promise((done) => setTimeout(done, 400));
    }
    // afterRead defaults to 'delete': every snapshot is gone once read.
    await waitUntil(() => readdirSync(drop).length === 0, { what: 'the drop folder to be emptied', timeoutMs: 120_000 });

    const file = join(dataDir, 'residuum.db');
    const count = (camera: string) => {
      const db = new Database(file, { readonly: true, fileMustExist: true });
      try {
        return db.prepare('SELECT count(*) AS n, total(value) AS sum FROM samples WHERE camera = ?').get(camera) as { n: number; sum: number };
      } finally {
        db.close();
      }
    };
    await waitUntil(
      () => {
        const refused = /could not store.*/.exec(run.stdout().toString('utf8'));
        if (refused) throw new Error(`the service refused its own samples: ${refused[0]}`);
        return count('door').n >= 1 && count('reading-room').n >= 5;
      },
      { what: 'samples of both cameras', timeoutMs: 120_000 },
    );
    expect(count('door').sum).toBeGreaterThan(0); // the snapshots' people were counted

    const api = [
      Buffer.from(await (await fetch(`http://127.0.0.1:${port}/api/live`)).arrayBuffer()),
      Buffer.from(await (await fetch(`http://127.0.0.1:${port}/api/health`)).arrayBuffer()),
    ];

    // Raw files while the service runs (the WAL holds the newest pages) …
    const rawHits = (when: string) => {
      const models = modelBlobs(file);
      const found: string[] = [];
      for (const name of filesBelow(root)) {
        for (const hit of unexplained(name, readFileSync(join(root, name)), models)) found.push(`${when}: ${name} has a ${hit.format} signature at byte ${hit.offset}`);
      }
      return found;
    };
    const running = rawHits('running');
    expect(filesBelow(dataDir).length).toBeGreaterThan(0);

    run.child.kill('SIGTERM');
    expect(await run.exit(120_000)).toEqual({ code: 0, signal: null });
    // … and after it stopped (the WAL checkpointed into the database file).
    expect([...running, ...rawHits('stopped')]).toEqual([]);
    expect(readdirSync(drop)).toEqual([]);
    expect(readdirSync(tmp)).toEqual([]);
    // Nothing written besides the database: the tree holds our inputs and residuum.db(-wal, -shm), and new-keys.txt (the admin key, no picture).
    for (const name of filesBelow(root)) expect(['residuum.yaml', 'door.rsdm', join('data', 'residuum.db'), join('data', 'residuum.db-wal'), join('data', 'residuum.db-shm'), join('data', 'new-keys.txt')]).toContain(name);

    // The database content through SQL: every TEXT and BLOB value outside the models table.
    const db = new Database(file, { readonly: true, fileMustExist: true });
    try {
      const tables = (db.prepare("SELECT name FROM sqlite_schema WHERE type = 'table'").all() as { name: string }[]).map((t) => t.name);
      expect(tables).toEqual(expect.arrayContaining(['samples', 'rollups', 'events', 'zones', 'zone_history', 'settings', 'cameras', 'models']));
      const problems: string[] = [];
      let values = 0;
      for (const table of tables) {
        if (table === 'models') continue;
        for (const { name: column } of db.pragma(`table_info("${table}")`) as { name: string }[]) {
          const where = `typeof("${column}") IN ('blob', 'text')`;
          const { longest } = db.prepare(`SELECT max(length(CAST("${column}" AS BLOB))) AS longest FROM "${table}" WHERE ${where}`).get() as { longest: number | null };
          if (longest !== null && longest >= FRAME_BYTES) problems.push(`${table}.${column} holds a value of ${longest} bytes (a frame is ${FRAME_BYTES} pixels)`);
          for (const { v } of db.prepare(`SELECT CAST("${column}" AS BLOB) AS v FROM "${table}" WHERE ${where}`).all() as { v: Buffer }[]) {
            values++;
            for (const hit of imageSignatures(v)) problems.push(`${table}.${column} holds a ${hit.format} signature`);
            if (BASE64_IMAGE.test(v.toString('latin1'))) problems.push(`${table}.${column} holds base64 image data`);
          }
        }
      }
      expect(values).toBeGreaterThan(0);
      expect(problems).toEqual([]);
      // The models table: only model files (the empty scene of each camera), nothing else.
      const models = db.prepare('SELECT camera, typeof(data) AS type, substr(data, 1, 8) AS head FROM models ORDER BY camera').all() as { camera: string; type: string; head: Buffer }[];
      expect(models.map((m) => m.camera)).toEqual(['door', 'reading-room']);
      for (const m of models) {
        expect(m.type).toBe('blob');
        expect(Buffer.from(m.head).equals(RSDMODEL)).toBe(true);
      }
    } finally {
      db.close();
    }

    // The logs and the API answers.
    const logs = Buffer.concat([run.stdout(), run.stderr()]);
    for (const out of [logs, ...api]) {
      expect(imageSignatures(out)).toEqual([]);
      expect(out.toString('utf8')).not.toMatch(BASE64_IMAGE);
      for (const line of out.toString('utf8').split('\n')) expect(line.length).toBeLessThan(2000);
    }
    expect(logs.toString('utf8')).toMatch(/camera door: started \(drop-folder/);
  }, 600_000);
});
