import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { FrameError } from '../../src/frames/FrameError.ts';
import { openFrames } from '../../src/frames/openFrames.ts';
import { collect, flatPng, makeTempDir, removeTempDir, runFfmpeg } from './fixtures.ts';

describe('openFrames', () => {
  let dir: string;

  beforeAll(async () => {
    dir = await makeTempDir();
    await mkdir(join(dir, 'images'));
    await writeFile(join(dir, 'images', 'b.png'), await flatPng(40, 30, 200));
    await writeFile(join(dir, 'images', 'a.png'), await flatPng(40, 30, 100));
    // A file name ffmpeg would take for a protocol ("clip:") if it were not made a path.
    await runFfmpeg(['-f', 'lavfi', '-i', 'color=c=gray:size=40x30:rate=5', '-frames:v', '3', '-c:v', 'ffv1', '-pix_fmt', 'gray', join(dir, 'clip:1.mkv')]);
  });

  afterAll(async () => {
    await removeTempDir(dir);
  });

  it('reads a folder as images', async () => {
    const items = await collect(openFrames(join(dir, 'images'), { longSide: 20 }));
    expect(items.map((item) => [item.name, item.frame?.width, item.frame?.height, item.frame?.data[0]])).toEqual([
      ['a.png', 20, 15, 100],
      ['b.png', 20, 15, 200],
    ]);
  });

  it('reads a file as a video, also by a relative path that looks like a URL', async () => {
    const items = await collect(openFrames(join(dir, 'clip:1.mkv'), { longSide: 20, every: 2 }));
    expect(items.map((item) => [item.name, item.frame?.width, item.frame?.height])).toEqual([
      ['0', 20, 15],
      ['2', 20, 15],
    ]);
    // Bare "clip:1.mkv" would be the protocol "clip" to ffmpeg (it answers "Protocol not found").
    const here = process.cwd();
    process.chdir(dir);
    try {
      expect(await collect(openFrames('clip:1.mkv', { longSide: 20 }))).toHaveLength(3);
    } finally {
      process.chdir(here);
    }
  });

  it('throws a FrameError naming a missing path', async () => {
    const missing = join(dir, 'nothing-here');
    const error = await collect(openFrames(missing)).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(FrameError);
    expect((error as Error).message).toBe(`${missing}: no such file or folder`);
  });
});
