import { appendFile, mkdir, readdir, rename, rm, stat, utimes, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dropFolder } from '../../../src/frames/live/dropFolder.ts';
import { assertAspect } from '../../../src/frames/workingSize.ts';
import { flatPng, makeTempDir, removeTempDir, truncatedJpeg } from '../fixtures.ts';
import { activeHandles, expectReleased, meanLevel, record, sleep, stripedJpeg, waitFor } from './liveFixtures.ts';

const SIZE = { width: 64, height: 48 };
const FAST = { scanIntervalMs: 100, settleMs: 150 };

let dir: string;
beforeEach(async () => {
  dir = await makeTempDir();
});
afterEach(async () => {
  await removeTempDir(dir);
});

/** The level of the flat part of a striped test image (its right half is flat). */
const levelOf = (frame: { width: number; height: number; data: Float32Array }): number => Math.round(meanLevel(frame as never, frame.width / 2));

describe('dropFolder', () => {
  it('reads complete images in natural name order, with their mtime, and deletes them by default', async () => {
    // Present before the start, so that they become complete at the same scan.
    const when = new Date('2024-03-01T10:00:00Z');
    for (const [name, level] of [['img10.jpg', 100], ['img2.JPG', 60], ['img1.jpeg', 30], ['notes.txt', 0]] as const) {
      await writeFile(join(dir, name), name.endsWith('.txt') ? 'not an image' : await stripedJpeg(128, 96, level));
      await utimes(join(dir, name), when, when);
    }
    const before = activeHandles();
    const source = dropFolder(dir, { id: 'upload', size: SIZE, ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.frames.length >= 3, 'three frames');
    expect(seen.frames.map((f) => levelOf(f.frame))).toEqual([30, 60, 100]);
    expect(seen.frames.map((f) => f.capturedAt)).toEqual([when.getTime(), when.getTime(), when.getTime()]);
    // check: sharp's own greyscale + resize (fit fill) of the same image.
    const reference = await sharp(await stripedJpeg(128, 96, 30)).greyscale().resize(64, 48, { fit: 'fill' }).raw().toBuffer();
    expect(Array.from(seen.frames[0].frame.data)).toEqual(Array.from(reference));
    await waitFor(async () => (await readdir(dir)).length === 1, 'the images to be deleted');
    expect(await readdir(dir)).toEqual(['notes.txt']);
    expect(seen.log.slice(0, 2)).toEqual(['connecting', 'online']);

    // One more, once the first ones are done.
    await writeFile(join(dir, 'more.jpg'), await stripedJpeg(128, 96, 200));
    // An upload under a .part name is left alone until renamed.
    await writeFile(join(dir, 'next.jpg.part'), await stripedJpeg(128, 96, 220));
    await waitFor(() => seen.frames.length >= 4, 'the fourth file');
    expect(levelOf(seen.frames[3].frame)).toBe(200);
    expect(await readdir(dir)).toEqual(expect.arrayContaining(['next.jpg.part']));
    await rename(join(dir, 'next.jpg.part'), join(dir, 'next.jpg'));
    await waitFor(() => seen.frames.length >= 5, 'the renamed upload');
    expect(levelOf(seen.frames[4].frame)).toBe(220);

    // A bad file: reported, and deleted too.
    await writeFile(join(dir, 'broken.jpg'), await truncatedJpeg(64, 48, 0.5));
    await waitFor(() => seen.bad.length >= 1, 'the bad file');
    expect(seen.bad[0].message).toMatch(/broken\.jpg: truncated or corrupt image/);
    await waitFor(async () => !(await readdir(dir)).includes('broken.jpg'), 'the bad file to be deleted');

    await source.stop();
    await expectReleased(before);
    expect(seen.bad).toHaveLength(1);
    expect(seen.frames).toHaveLength(5);
  });

  it('waits for a file written slowly in two parts to be complete', async () => {
    const source = dropFolder(dir, { id: 'slow', size: SIZE, scanIntervalMs: 50, settleMs: 1500 });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.state() === 'online', 'online');
    const slow = await stripedJpeg(128, 96, 200);
    await writeFile(join(dir, 'slow.jpg'), slow.subarray(0, slow.length >> 1));
    await sleep(300); // the uploader pauses (well within settleMs)
    await appendFile(join(dir, 'slow.jpg'), slow.subarray(slow.length >> 1));
    await waitFor(() => seen.frames.length >= 1, 'the slow file');
    await source.stop();
    expect(seen.bad).toEqual([]);
    expect(levelOf(seen.frames[0].frame)).toBe(200);
  });

  it("with afterRead 'keep' leaves the files and reads each (name, mtime) once", async () => {
    await writeFile(join(dir, 'a.jpg'), await stripedJpeg(64, 48, 40));
    await writeFile(join(dir, 'b.jpg'), await stripedJpeg(64, 48, 80));
    const source = dropFolder(dir, { id: 'k', size: SIZE, ...FAST, afterRead: 'keep' });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.frames.length >= 2, 'two frames');
    // A later file shows that later scans ran; the kept ones are not read again.
    await writeFile(join(dir, 'c.jpg'), await stripedJpeg(64, 48, 120));
    await waitFor(() => seen.frames.length >= 3, 'the third file');
    await writeFile(join(dir, 'd.jpg'), await stripedJpeg(64, 48, 160));
    await waitFor(() => seen.frames.length >= 4, 'the fourth file');
    expect(seen.frames.map((f) => levelOf(f.frame))).toEqual([40, 80, 120, 160]);
    expect((await readdir(dir)).sort()).toEqual(['a.jpg', 'b.jpg', 'c.jpg', 'd.jpg']);
    // Replaced under the same name (new mtime): read again.
    // (Prepared under a hidden name, which is never read, so that it appears with its final mtime.)
    await writeFile(join(dir, '.a.jpg'), await stripedJpeg(64, 48, 240));
    const later = new Date(Date.now() + 60_000);
    await utimes(join(dir, '.a.jpg'), later, later);
    await rename(join(dir, '.a.jpg'), join(dir, 'a.jpg'));
    await waitFor(() => seen.frames.length >= 5, 'the replaced file');
    await source.stop();
    expect(levelOf(seen.frames[4].frame)).toBe(240);
    expect(seen.frames[4].capturedAt).toBe((await stat(join(dir, 'a.jpg'))).mtimeMs);
    expect(seen.bad).toEqual([]);
  });

  it('is offline while the folder is missing and online once it is there', async () => {
    const path = join(dir, 'later');
    const source = dropFolder(path, { id: 'm', size: SIZE, ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.state() === 'offline', 'offline');
    expect(seen.statuses[1].detail).toMatchObject({ reason: `${path}: folder not found`, retryInMs: 100 });
    await mkdir(path);
    await waitFor(() => seen.state() === 'online', 'online');
    await writeFile(join(path, 'x.png'), await flatPng(32, 24, 90));
    await waitFor(() => seen.frames.length >= 1, 'a frame');
    await rm(path, { recursive: true });
    await waitFor(() => seen.state() === 'offline', 'offline again');
    await source.stop();
    expect(seen.log).toEqual(['connecting', 'offline', 'online', 'frame', 'offline']);
    expect(Math.round(meanLevel(seen.frames[0].frame))).toBe(90);
  });

  it('reports files of the wrong aspect ratio, goes offline after a streak, online again with a good file', async () => {
    for (let k = 1; k <= 3; k++) await writeFile(join(dir, `sq${k}.jpg`), await stripedJpeg(64, 64, 100));
    const source = dropFolder(dir, { id: 'w', size: SIZE, ...FAST, badFramesBeforeOffline: 3 });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.state() === 'offline', 'offline');
    let expected = '';
    try {
      assertAspect(SIZE, { width: 64, height: 64 });
    } catch (error) {
      expected = (error as Error).message;
    }
    expect(seen.bad.map((e) => e.message)).toEqual([1, 2, 3].map((k) => `${join(dir, `sq${k}.jpg`)}: ${expected}`));
    expect(seen.statuses.at(-1)!.detail.reason).toBe(`wrong aspect ratio: ${expected}`);
    await writeFile(join(dir, 'good.jpg'), await stripedJpeg(64, 48, 100));
    await waitFor(() => seen.frames.length >= 1, 'a good frame');
    await source.stop();
    expect(seen.log).toEqual(['connecting', 'online', 'bad', 'bad', 'bad', 'offline', 'online', 'frame']);
    expect(await readdir(dir)).toEqual([]);
  });

  it('reports a change of image size with the same aspect ratio once, before its frame, for JPEG and PNG files', async () => {
    const when = new Date('2024-03-01T10:00:00Z');
    const files: [string, Buffer][] = [
      ['a1.jpg', await stripedJpeg(128, 96, 30)],
      ['a2.jpg', await stripedJpeg(128, 96, 60)],
      ['a3.jpg', await stripedJpeg(256, 192, 100)],
      ['a4.png', await flatPng(256, 192, 150)], // the same size, another format
      ['a5.jpg', await stripedJpeg(128, 96, 200)],
    ];
    for (const [name, bytes] of files) {
      await writeFile(join(dir, name), bytes);
      await utimes(join(dir, name), when, when);
    }
    const source = dropFolder(dir, { id: 'sizes', size: SIZE, ...FAST });
    const seen = record();
    source.start(seen.handlers);
    await waitFor(() => seen.frames.length >= 5, 'five frames');
    await source.stop();
    expect(seen.bad).toEqual([]);
    expect(seen.log).toEqual(['connecting', 'online', 'frame', 'frame', 'online', 'frame', 'frame', 'online', 'frame']);
    expect(seen.frames.map((f) => levelOf(f.frame))).toEqual([30, 60, 100, 150, 200]);
    const changes = seen.statuses.filter((s) => s.detail.previousSourceSize !== undefined).map((s) => s.detail);
    expect(changes).toEqual([
      expect.objectContaining({ reason: 'source size changed: 128×96 → 256×192', previousSourceSize: { width: 128, height: 96 }, sourceSize: { width: 256, height: 192 } }),
      expect.objectContaining({ reason: 'source size changed: 256×192 → 128×96', previousSourceSize: { width: 256, height: 192 }, sourceSize: { width: 128, height: 96 } }),
    ]);
  });

  it('validates its options naming the field', () => {
    expect(() => dropFolder(dir, { id: 'a', size: SIZE, afterRead: 'move' as never })).toThrow(/afterRead must be 'delete' or 'keep'/);
    expect(() => dropFolder(dir, { id: 'a', size: SIZE, settleMs: -1 })).toThrow(/settleMs/);
    expect(() => dropFolder('', { id: 'a', size: SIZE })).toThrow(/path/);
  });
});
