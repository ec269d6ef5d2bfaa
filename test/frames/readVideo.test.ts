import { existsSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FrameItem } from '../../src/domain/frame.ts';
import { FrameError } from '../../src/frames/FrameError.ts';
import { FFMPEG_NOT_FOUND, readVideo } from '../../src/frames/readVideo.ts';
import { childProcesses, collect, encodeGrey, greyPixels, makeTempDir, removeTempDir, runFfmpeg, runFfprobe } from './fixtures.ts';

// Synthetic clip: 12 frames of 64×48; frame k has its left half at level 10 + 15k, its right
// half at 240 − 10k, and its top 8 rows at 128, so that frame order and x/y directions show.
const WIDTH = 64;
const HEIGHT = 48;
const FRAMES = 12;
const level = (k: number, x: number, y: number): number => (y < 8 ? 128 : x < WIDTH / 2 ? 10 + 15 * k : 240 - 10 * k);

describe('readVideo', () => {
  let dir: string;
  let clip: string;

  beforeAll(async () => {
    dir = await makeTempDir();
    for (let k = 0; k < FRAMES; k++) {
      const pixels = greyPixels(WIDTH, HEIGHT, (x, y) => level(k, x, y));
      await writeFile(join(dir, `f${String(k).padStart(3, '0')}.png`), await encodeGrey(pixels, WIDTH, HEIGHT, 'png'));
    }
    // FFV1 with gray pixels is lossless, so the decoded levels are exactly the ones above.
    clip = join(dir, 'clip.mkv');
    await runFfmpeg(['-framerate', '10', '-i', join(dir, 'f%03d.png'), '-c:v', 'ffv1', '-pix_fmt', 'gray', clip]);
  });

  afterAll(async () => {
    await removeTempDir(dir);
  });

  it('yields every frame at the source size with the exact grey levels', async () => {
    const items = await collect(readVideo(clip, { width: WIDTH, height: HEIGHT }));
    expect(items.map((item) => item.name)).toEqual(Array.from({ length: FRAMES }, (_, k) => String(k)));
    items.forEach((item, k) => {
      const frame = item.frame!;
      expect([frame.width, frame.height]).toEqual([WIDTH, HEIGHT]);
      let worst = 0;
      for (let y = 0; y < HEIGHT; y++) {
        for (let x = 0; x < WIDTH; x++) worst = Math.max(worst, Math.abs(frame.data[y * WIDTH + x] - level(k, x, y)));
      }
      expect(worst, `frame ${k}`).toBe(0);
    });
  });

  it('scales to the long side, averaging areas (flat areas stay flat)', async () => {
    const items = await collect(readVideo(clip, { longSide: 32 }));
    expect(items).toHaveLength(FRAMES);
    items.forEach((item, k) => {
      const frame = item.frame!;
      expect([frame.width, frame.height]).toEqual([32, 24]);
      // Away from the edges between areas, a 2×2 area average of a flat area is that level.
      expect(frame.data[1 * 32 + 16]).toBe(128);
      expect(Math.abs(frame.data[14 * 32 + 6] - (10 + 15 * k))).toBeLessThanOrEqual(1);
      expect(Math.abs(frame.data[14 * 32 + 26] - (240 - 10 * k))).toBeLessThanOrEqual(1);
    });
  });

  it('keeps one frame in `every`, named by source index, without repeating frames', async () => {
    const items = await collect(readVideo(clip, { width: WIDTH, height: HEIGHT, every: 3 }));
    expect(items.map((item) => item.name)).toEqual(['0', '3', '6', '9']);
    // The left-half level identifies the source frame: 10 + 15k.
    expect(items.map((item) => item.frame!.data[20 * WIDTH + 5])).toEqual([10, 55, 100, 145]);
  });

  it('stops at `limit`', async () => {
    const items = await collect(readVideo(clip, { longSide: 16, limit: 5 }));
    expect(items.map((item) => item.name)).toEqual(['0', '1', '2', '3', '4']);
    const sparse = await collect(readVideo(clip, { longSide: 16, every: 5, limit: 2 }));
    expect(sparse.map((item) => item.name)).toEqual(['0', '5']);
  });

  it('kills ffmpeg when the consumer stops early', async () => {
    // Long enough (200 frames of 320×240, 15 MB raw) that ffmpeg cannot have finished on its own.
    const long = join(dir, 'long.mkv');
    await runFfmpeg(['-f', 'lavfi', '-i', 'testsrc=size=320x240:rate=25', '-frames:v', '200', '-c:v', 'ffv1', long]);
    const iterator = readVideo(long)[Symbol.asyncIterator]();
    const first = await iterator.next();
    expect(first.value?.name).toBe('0');
    const running = await childProcesses('ffmpeg');
    expect(running).toHaveLength(1);
    await iterator.return(undefined);
    expect(await childProcesses('ffmpeg')).toEqual([]); // neither running nor a zombie
    // The same with for-await and break.
    let seen = 0;
    for await (const item of readVideo(long)) {
      expect(item.frame).toBeDefined();
      if (++seen === 3) break;
    }
    expect(seen).toBe(3);
    expect(await childProcesses('ffmpeg')).toEqual([]);
  });

  it('kills ffmpeg and throws the reason when the signal aborts', async () => {
    const controller = new AbortController();
    const names: string[] = [];
    const reading = (async () => {
      for await (const item of readVideo(clip, { signal: controller.signal, longSide: 16 })) {
        names.push(item.name);
        if (names.length === 2) controller.abort(new Error('stopped by test'));
      }
    })();
    await expect(reading).rejects.toThrow('stopped by test');
    expect(names).toEqual(['0', '1']);
    expect(await childProcesses('ffmpeg')).toEqual([]);
  });

  it('says how to get ffmpeg when it is missing', async () => {
    const error = await collect(readVideo(clip, { ffmpegPath: '/nonexistent/ffmpeg' })).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(Error);
    expect((error as Error).message).toContain(FFMPEG_NOT_FOUND);
    expect(FFMPEG_NOT_FOUND).toBe('ffmpeg not found: install it (Debian: apt-get install ffmpeg) or pass --ffmpeg');
    expect((error as Error).message).toContain('/nonexistent/ffmpeg');
  });

  it("reports ffmpeg's failure with its stderr, naming the file", async () => {
    const junk = join(dir, 'junk.mkv');
    await writeFile(junk, Buffer.alloc(5000, 7));
    const error = await collect(readVideo(junk)).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(FrameError);
    expect((error as FrameError).source).toBe(junk);
    // ffmpeg's own words for an unreadable input (libavformat AVERROR_INVALIDDATA).
    expect((error as Error).message).toMatch(/ffmpeg exited with code \d+: .*Invalid data found when processing input/s);
    const missing = join(dir, 'missing.mkv');
    await expect(collect(readVideo(missing))).rejects.toThrow(/No such file or directory/);
  });

  it('refuses a file without a video stream', async () => {
    const audio = join(dir, 'tone.mka');
    await runFfmpeg(['-f', 'lavfi', '-i', 'sine=frequency=440:duration=0.2', '-c:a', 'pcm_s16le', audio]);
    // ffmpeg's words when the -map 0:v:0 selector finds nothing.
    await expect(collect(readVideo(audio))).rejects.toThrow(/tone\.mka: ffmpeg exited with code \d+: .*matches no streams/s);
  });

  it('refuses a model size of another aspect ratio, naming both sizes', async () => {
    await expect(collect(readVideo(clip, { width: 40, height: 40 }))).rejects.toThrow(
      /clip\.mkv: source is 64×48 .*model is 40×40/,
    );
  });

  it('reads the OpenCV sample video test/data/tree.avi', async () => {
    const tree = resolve('test/data/tree.avi');
    if (!existsSync(tree)) {
      throw new Error(`${tree} is missing: run \`npm run testdata\` to fetch it (scripts/fetch-testdata.sh)`);
    }
    // check: ffprobe -count_frames decodes the stream and counts the pictures (nb_read_frames).
    // tree.avi declares 444 frames in its AVI index, but only 68 carry a picture; the others are
    // empty "repeat the previous frame" entries (measured with ffprobe 5.1: 68).
    const probed = JSON.parse(
      await runFfprobe(['-select_streams', 'v:0', '-count_frames', '-show_entries', 'stream=width,height,nb_read_frames', '-of', 'json', tree]),
    ) as { streams: { width: number; height: number; nb_read_frames: string }[] };
    const stream = probed.streams[0];
    expect([stream.width, stream.height]).toEqual([320, 240]);
    const items: FrameItem[] = await collect(readVideo(tree));
    expect(items).toHaveLength(Number(stream.nb_read_frames));
    expect(items).toHaveLength(68);
    for (const item of items) expect([item.frame?.width, item.frame?.height]).toEqual([320, 240]);
    // Real picture content: not a flat frame.
    const data = items[0].frame!.data;
    expect(Math.max(...data) - Math.min(...data)).toBeGreaterThan(50);
  });
});
