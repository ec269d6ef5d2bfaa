import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createShadowRoom } from '../../src/frames/synthetic/shadowRoom.ts';

// Drives the real command line (bin/residuum.js) in colour mode on folders made from our own
// synthetic shadow room (invented scene, nobody real).
const root = new URL('../../', import.meta.url).pathname;
const dir = mkdtempSync(join(tmpdir(), 'residuum-colour-cli-'));
const scene = createShadowRoom({});

function residuum(...args: string[]) {
  const run = spawnSync(process.execPath, [join(root, 'bin/residuum.js'), ...args], { cwd: dir, encoding: 'utf8', timeout: 300_000 });
  return { code: run.status, out: run.stdout, err: run.stderr };
}

async function writeColour(folder: string, frames: Uint8Array[]): Promise<void> {
  mkdirSync(folder, { recursive: true });
  await Promise.all(frames.map((data, i) =>
    sharp(Buffer.from(data), { raw: { width: scene.width, height: scene.height, channels: 3 } }).png().toFile(join(folder, `frame-${i + 1}.png`))));
}

const counted = [600, 900, 1200, 1500];
beforeAll(async () => {
  await writeColour(join(dir, 'empty'), Array.from({ length: 60 }, (_, i) => scene.emptyColourFrameAt(i * 50).colour.data));
  await writeColour(join(dir, 'busy'), counted.map((t) => scene.colourFrameAt(t).colour.data));
  writeFileSync(join(dir, 'zones.yaml'), `zones:\n${scene.zones.map((z) => `  - ${JSON.stringify(z)}`).join('\n')}\n`);
  const truth = Object.fromEntries(counted.map((t, i) => [`frame-${i + 1}.png`, Object.fromEntries(Object.entries(scene.colourFrameAt(t).truth).map(([z, v]) => [z, v.count]))]));
  writeFileSync(join(dir, 'truth.json'), JSON.stringify({ frames: truth }));
}, 300_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('residuum learn, count and evaluate --colour', () => {
  it('learns the colour statistics from a folder and counts a folder in colour', () => {
    const learn = residuum('learn', '--frames', 'empty', '--out', 'colour.rsdm', '--colour');
    expect(learn.code, learn.err).toBe(0);
    expect(learn.out).toMatch(/frames used\s+60/);
    expect(learn.out).toMatch(/colour\s+learned for shadow suppression \(median chromaticity spread [\d.]+ σ\)/);
    const grey = residuum('learn', '--frames', 'empty', '--out', 'grey.rsdm');
    expect(grey.code).toBe(0);
    expect(grey.out).not.toMatch(/shadow/);

    const count = residuum('count', '--model', 'colour.rsdm', '--frames', 'busy', '--zones', 'zones.yaml', '--json', '--colour');
    expect(count.code, count.err).toBe(0);
    const lines = count.out.trim().split('\n').map((l) => JSON.parse(l));
    expect(lines.map((l) => l.frame)).toEqual(['frame-1.png', 'frame-2.png', 'frame-3.png', 'frame-4.png']);
    let offColour = 0;
    lines.forEach((line, i) => {
      const truth = scene.colourFrameAt(counted[i]).truth;
      for (const z of scene.zones) offColour += Math.abs(line.zones[z.id].count - truth[z.id].count);
    });
    // The same frames in grey: the shadows add blobs and merge people with them.
    const greyCount = residuum('count', '--model', 'grey.rsdm', '--frames', 'busy', '--zones', 'zones.yaml', '--json');
    let offGrey = 0;
    greyCount.out.trim().split('\n').map((l) => JSON.parse(l)).forEach((line, i) => {
      const truth = scene.colourFrameAt(counted[i]).truth;
      for (const z of scene.zones) offGrey += Math.abs(line.zones[z.id].count - truth[z.id].count);
    });
    console.log(`count errors over ${4 * scene.zones.length} zone counts: colour ${offColour}, grey ${offGrey}`);
    expect(offColour).toBeLessThanOrEqual(6); // MAE ≤ 0.5, as measured on the longer run in test/counting/shadows.test.ts
    expect(offColour).toBeLessThan(offGrey);

    // A colour model counted without --colour counts in grey, as the grey model does.
    const plain = residuum('count', '--model', 'colour.rsdm', '--frames', 'busy', '--zones', 'zones.yaml', '--json');
    expect(plain.out).toBe(greyCount.out);

    const evaluated = residuum('evaluate', '--model', 'colour.rsdm', '--frames', 'busy', '--truth', 'truth.json', '--zones', 'zones.yaml', '--colour', '--method', 'both', '--json');
    expect(evaluated.code, evaluated.err).toBe(0);
    const report = JSON.parse(evaluated.out);
    expect(report.methods.map((m: { method: string }) => m.method)).toEqual(['subspace-colour', 'mog2-colour']);
    expect(report.methods[0].zones.tables.frames).toBe(4);
  });

  it('learns from the built-in colour scene', () => {
    const learn = residuum('learn', '--frames', 'synthetic:shadow-room:empty', '--every', '10', '--limit', '30', '--out', 'scene.rsdm', '--colour');
    expect(learn.code, learn.err).toBe(0);
    expect(learn.out).toMatch(/frames used\s+30/);
    expect(learn.out).toMatch(/working size\s+320×240/);
  });

  it('names the file or option when colour is not available', () => {
    const noColour = residuum('count', '--model', 'grey.rsdm', '--frames', 'busy', '--colour');
    expect(noColour.code).toBe(1);
    expect(noColour.err).toMatch(/grey\.rsdm: learned without colour statistics; learn it again with --colour/);
    writeFileSync(join(dir, 'clip.mkv'), 'not really a video');
    const video = residuum('count', '--model', 'colour.rsdm', '--frames', 'clip.mkv', '--colour');
    expect(video.code).toBe(2);
    expect(video.err).toMatch(/--colour reads a folder of images or synthetic:shadow-room; clip\.mkv is not a folder/);
    const greyScene = residuum('learn', '--frames', 'synthetic:reading-room:empty', '--out', 'x.rsdm', '--colour', '--limit', '5');
    expect(greyScene.code).toBe(2);
    expect(greyScene.err).toMatch(/the synthetic scene "reading-room" is grey only/);
    const camera = residuum('learn', '--config', 'none.yaml', '--camera', 'a', '--colour');
    expect(camera.code).toBe(2);
    expect(camera.err).toMatch(/--colour does not go with --config/);
  });
});
