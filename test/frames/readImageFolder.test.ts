import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FrameItem } from '../../src/domain/frame.ts';
import { FrameError } from '../../src/frames/FrameError.ts';
import { readImageFolder } from '../../src/frames/readImageFolder.ts';
import { collect, encodeGrey, flatPng, greyPixels, makeTempDir, removeTempDir, truncatedJpeg } from './fixtures.ts';

/** Names and (for frames) the level of pixel 0, or 'error'. */
function summary(items: FrameItem[]): [string, number | 'error'][] {
  return items.map((item) => [item.name, item.frame ? item.frame.data[0] : 'error']);
}

describe('readImageFolder', () => {
  let root: string;
  let mixed: string;

  beforeAll(async () => {
    root = await makeTempDir();
    // A camera folder: 64×48 flat images whose level tells which file it was, one truncated
    // JPEG, files that are not images, a hidden file and a subfolder, all to be skipped.
    mixed = join(root, 'mixed');
    await mkdir(join(mixed, 'sub'), { recursive: true });
    await writeFile(join(mixed, 'frame10.png'), await flatPng(64, 48, 100));
    await writeFile(join(mixed, 'frame2.png'), await flatPng(64, 48, 20));
    await writeFile(join(mixed, 'frame1.png'), await flatPng(64, 48, 10));
    await writeFile(join(mixed, 'Frame3.PNG'), await flatPng(64, 48, 30));
    await writeFile(join(mixed, 'frame4.jpg'), await truncatedJpeg(64, 48));
    await writeFile(join(mixed, 'frame5.webp'), await encodeGrey(greyPixels(64, 48, () => 50), 64, 48, 'webp', { lossless: true }));
    await writeFile(join(mixed, 'notes.txt'), 'not an image');
    await writeFile(join(mixed, '.frame0.png'), await flatPng(64, 48, 1));
    await writeFile(join(mixed, 'sub', 'frame6.png'), await flatPng(64, 48, 60));
  });

  afterAll(async () => {
    await removeTempDir(root);
  });

  it('yields the images in natural order, reporting the bad one and going on', async () => {
    const items = await collect(readImageFolder(mixed, { longSide: 32 }));
    expect(summary(items)).toEqual([
      ['frame1.png', 10],
      ['frame2.png', 20],
      ['Frame3.PNG', 30],
      ['frame4.jpg', 'error'],
      ['frame5.webp', 50],
      ['frame10.png', 100],
    ]);
    for (const item of items) {
      if (item.frame) expect([item.frame.width, item.frame.height]).toEqual([32, 24]);
    }
    const bad = items[3].error;
    expect(bad).toBeInstanceOf(FrameError);
    expect(bad?.message).toMatch(/frame4\.jpg: truncated or corrupt image/);
    expect((bad as FrameError).source).toBe(join(mixed, 'frame4.jpg'));
  });

  it('keeps one image in `every`, counting bad files too, and stops at `limit`', async () => {
    expect(summary(await collect(readImageFolder(mixed, { longSide: 32, every: 2 })))).toEqual([
      ['frame1.png', 10],
      ['Frame3.PNG', 30],
      ['frame5.webp', 50],
    ]);
    expect(summary(await collect(readImageFolder(mixed, { longSide: 32, limit: 2 })))).toEqual([
      ['frame1.png', 10],
      ['frame2.png', 20],
    ]);
    expect(summary(await collect(readImageFolder(mixed, { longSide: 32, every: 3, limit: 5 })))).toEqual([
      ['frame1.png', 10],
      ['frame4.jpg', 'error'],
    ]);
  });

  it('takes the working size from the first image that decodes and holds the others to it', async () => {
    const dir = join(root, 'sizes');
    await mkdir(dir);
    await writeFile(join(dir, 'a0.jpg'), await truncatedJpeg()); // bad: no size from it
    await writeFile(join(dir, 'a1.png'), await flatPng(80, 60, 11)); // 4:3, sets 40×30
    await writeFile(join(dir, 'a2.png'), await flatPng(160, 120, 22)); // 4:3, larger: resized
    await writeFile(join(dir, 'a3.png'), await flatPng(160, 90, 33)); // 16:9: wrong aspect
    const items = await collect(readImageFolder(dir, { longSide: 40 }));
    expect(summary(items)).toEqual([
      ['a0.jpg', 'error'],
      ['a1.png', 11],
      ['a2.png', 22],
      ['a3.png', 'error'],
    ]);
    expect([items[2].frame?.width, items[2].frame?.height]).toEqual([40, 30]);
    expect(items[3].error?.message).toMatch(/a3\.png: source is 160×90 .*model is 40×30/);
  });

  it('resizes every image to a given width × height (the model size)', async () => {
    const items = await collect(readImageFolder(mixed, { width: 16, height: 12 }));
    const frames = items.filter((item) => item.frame);
    expect(frames).toHaveLength(5);
    for (const item of frames) expect([item.frame?.width, item.frame?.height]).toEqual([16, 12]);
    // 64×48 is 4:3; a 16:9 model size makes every image an error item naming both sizes.
    const wrong = await collect(readImageFolder(mixed, { width: 32, height: 18 }));
    expect(wrong.every((item) => item.error)).toBe(true);
    expect(wrong[0].error?.message).toMatch(/frame1\.png: source is 64×48 .*model is 32×18/);
  });

  it('throws, naming the folder, when it is empty, holds no images, is missing or is a file', async () => {
    const empty = join(root, 'empty');
    await mkdir(empty);
    await expect(collect(readImageFolder(empty))).rejects.toThrow(`${empty}: folder is empty`);
    const noImages = join(root, 'no-images');
    await mkdir(noImages);
    await writeFile(join(noImages, 'readme.md'), '#');
    await writeFile(join(noImages, 'video.avi'), '');
    await expect(collect(readImageFolder(noImages))).rejects.toThrow(`${noImages}: no images in folder`);
    const missing = join(root, 'missing');
    await expect(collect(readImageFolder(missing))).rejects.toThrow(`${missing}: folder not found`);
    const file = join(mixed, 'frame1.png');
    await expect(collect(readImageFolder(file))).rejects.toThrow(`${file}: not a folder`);
    await expect(collect(readImageFolder(missing))).rejects.toBeInstanceOf(FrameError);
  });

  it('stops with the abort reason when the signal aborts', async () => {
    const controller = new AbortController();
    const seen: string[] = [];
    const reading = (async () => {
      for await (const item of readImageFolder(mixed, { longSide: 32, signal: controller.signal })) {
        seen.push(item.name);
        if (seen.length === 2) controller.abort(new Error('stopped by test'));
      }
    })();
    await expect(reading).rejects.toThrow('stopped by test');
    expect(seen).toEqual(['frame1.png', 'frame2.png']);
  });

  it('rejects bad options, naming the field', async () => {
    await expect(collect(readImageFolder(mixed, { every: 0 }))).rejects.toThrow(/every must be a whole number/);
    await expect(collect(readImageFolder(mixed, { limit: 1.5 }))).rejects.toThrow(/limit/);
    await expect(collect(readImageFolder(mixed, { height: 10 }))).rejects.toThrow(/height needs width/);
  });
});
