import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createScene } from '../../src/frames/synthetic/index.ts';

// Drives the real command line (bin/residuum.js) on folders and a video made from our own
// synthetic reading room (invented scenes, nobody real).
const root = new URL('../../', import.meta.url).pathname;
const dir = mkdtempSync(join(tmpdir(), 'residuum-cli-'));
const scene = createScene('reading-room', {});

function residuum(...args: string[]) {
  const run = spawnSync(process.execPath, [join(root, 'bin/residuum.js'), ...args], { cwd: dir, encoding: 'utf8', timeout: 120_000 });
  return { code: run.status, out: run.stdout, err: run.stderr };
}

async function writeFrames(folder: string, frames: Float32Array[], ext: 'png' | 'jpg'): Promise<void> {
  mkdirSync(folder, { recursive: true });
  await Promise.all(frames.map((data, i) => {
    const image = sharp(Buffer.from(Uint8Array.from(data)), { raw: { width: scene.width, height: scene.height, channels: 1 } });
    return (ext === 'png' ? image.png() : image.jpeg({ quality: 95 })).toFile(join(folder, `frame-${i + 1}.${ext}`));
  }));
}

const counted = [600, 900, 1200, 1500];
beforeAll(async () => {
  await writeFrames(join(dir, 'empty'), Array.from({ length: 60 }, (_, i) => scene.emptyFrameAt(i * 50).data), 'png');
  await writeFrames(join(dir, 'busy'), counted.map((t) => scene.frameAt(t).frame.data), 'png');
  writeFileSync(join(dir, 'zones.yaml'), `zones:\n${scene.zones.map((z) => `  - ${JSON.stringify(z)}`).join('\n')}\n`);
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('residuum learn and count', () => {
  it('learns from a folder and counts a folder as JSON lines', () => {
    const learn = residuum('learn', '--frames', 'empty', '--out', 'room.rsdm');
    expect(learn.code).toBe(0);
    expect(learn.out).toMatch(/frames used\s+60/);
    expect(learn.out).toMatch(/components kept\s+\d+/);
    expect(learn.out).toMatch(/variance retained\s+[\d.]+ %/);
    expect(learn.out).toMatch(/residual noise\s+[\d.]+ grey levels/);
    expect(learn.out).toMatch(/verdict\s+(good|fair|poor): /);
    const count = residuum('count', '--model', 'room.rsdm', '--frames', 'busy', '--zones', 'zones.yaml', '--json');
    expect(count.code).toBe(0);
    const lines = count.out.trim().split('\n').map((l) => JSON.parse(l));
    // Natural order: frame-1 … frame-4.
    expect(lines.map((l) => l.frame)).toEqual(['frame-1.png', 'frame-2.png', 'frame-3.png', 'frame-4.png']);
    lines.forEach((line, i) => {
      expect(Object.keys(line)).toEqual(['frame', 'total', 'zones']);
      expect(Object.keys(line.zones)).toEqual(scene.zones.map((z) => z.id));
      const truth = scene.frameAt(counted[i]).truth;
      let off = 0;
      for (const z of scene.zones) {
        expect(Number.isInteger(line.zones[z.id].count)).toBe(true);
        expect(line.zones[z.id].fill).toBeGreaterThanOrEqual(0);
        expect(line.zones[z.id].fill).toBeLessThanOrEqual(1);
        off += Math.abs(line.zones[z.id].count - truth[z.id].count);
      }
      expect(off).toBeLessThanOrEqual(1);
    });
    const table = residuum('count', '--model', 'room.rsdm', '--frames', 'busy', '--zones', 'zones.yaml');
    expect(table.out.split('\n')[0]).toMatch(/^frame\s+total\s+entrance\s+stacks\s+tables/);
  });

  it('counts a video file decoded by ffmpeg', () => {
    // A lossless video of the counted frames, each shown for 2 frames.
    const made = spawnSync('ffmpeg', ['-v', 'error', '-y', '-framerate', '1', '-i', join(dir, 'busy', 'frame-%d.png'), '-c:v', 'ffv1', join(dir, 'busy.mkv')]);
    expect(made.status).toBe(0);
    const count = residuum('count', '--model', 'room.rsdm', '--frames', 'busy.mkv', '--zones', 'zones.yaml', '--json');
    expect(count.code).toBe(0);
    const lines = count.out.trim().split('\n').map((l) => JSON.parse(l));
    expect(lines.map((l) => l.frame)).toEqual(['0', '1', '2', '3']);
    const fromFolder = residuum('count', '--model', 'room.rsdm', '--frames', 'busy', '--zones', 'zones.yaml', '--json');
    const folderLines = fromFolder.out.trim().split('\n').map((l) => JSON.parse(l));
    lines.forEach((l, i) => expect(l.total).toBe(folderLines[i].total));
  });

  it('names the file or field for bad input and exits non-zero', async () => {
    mkdirSync(join(dir, 'nothing'), { recursive: true });
    const empty = residuum('learn', '--frames', 'nothing', '--out', 'x.rsdm');
    expect(empty.code).toBe(1);
    expect(empty.err).toMatch(/nothing/);

    // A model that cannot be written is refused before learning, in words, without a stack trace.
    const nowhere = residuum('learn', '--frames', 'empty', '--out', '/no/such/folder/room.rsdm');
    expect(nowhere.code).toBe(1);
    expect(nowhere.err).toBe('residuum learn: --out: the folder /no/such/folder does not exist; create it first or write the model elsewhere\n');

    writeFileSync(join(dir, 'broken.rsdm'), 'RSDMODEL but not really');
    const corrupt = residuum('count', '--model', 'broken.rsdm', '--frames', 'busy');
    expect(corrupt.code).toBe(1);
    expect(corrupt.err).toMatch(/broken\.rsdm: /);

    writeFileSync(join(dir, 'bad-zones.yaml'), 'zones:\n  - {id: a, kind: room, polygon: [[0, 0], [1, 1]]}\n');
    const zones = residuum('count', '--model', 'room.rsdm', '--frames', 'busy', '--zones', 'bad-zones.yaml');
    expect(zones.code).toBe(1);
    expect(zones.err).toMatch(/bad-zones\.yaml: zones\[0\]\.polygon needs at least 3 points/);

    // A frame of another aspect ratio is refused by name; a truncated image is skipped and reported.
    mkdirSync(join(dir, 'mixed'), { recursive: true });
    await sharp({ create: { width: 200, height: 200, channels: 3, background: { r: 128, g: 128, b: 128 } } }).png().toFile(join(dir, 'mixed', 'a-square.png'));
    const good = readFileSync(join(dir, 'busy', 'frame-1.png'));
    writeFileSync(join(dir, 'mixed', 'b-good.png'), good);
    writeFileSync(join(dir, 'mixed', 'c-truncated.png'), good.subarray(0, 200));
    writeFileSync(join(dir, 'mixed', 'd-zero.png'), '');
    const mixed = residuum('count', '--model', 'room.rsdm', '--frames', 'mixed', '--json');
    expect(mixed.code).toBe(0);
    expect(mixed.out.trim().split('\n').map((l) => JSON.parse(l).frame)).toEqual(['b-good.png']);
    expect(mixed.err).toMatch(/a-square\.png: .*aspect/);
    expect(mixed.err).toMatch(/c-truncated\.png/);
    expect(mixed.err).toMatch(/d-zero\.png/);
    expect(mixed.err).toMatch(/3 frames skipped, 1 counted/);

    const usage = residuum('count', '--frames', 'busy');
    expect(usage.code).toBe(2);
    expect(usage.err).toMatch(/--model is required/);
  });
});
