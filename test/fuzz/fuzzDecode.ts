import sharp from 'sharp';
import { decodeImage } from '../../src/frames/decodeImage.ts';
import { FrameError } from '../../src/frames/FrameError.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { mulberry } from '../helpers/random.ts';
import { Mutation, mutateImage } from './mutateImage.ts';

export interface FuzzResult {
  tried: number;
  decoded: number;
  refused: number;
  /** Errors that were not a FrameError with the file's name: each one is a bug. */
  unexpected: string[];
  byKind: Record<string, { tried: number; refused: number }>;
  rssGrowthMb: number;
}

/**
 * Decodes `count` damaged images (from JPEG, PNG, WebP and GIF encodings of our synthetic scene)
 * and sorts the outcomes: decoded to a frame, refused with a FrameError naming the file, or
 * anything else (a bug). Bounded in count; `concurrency` decodes run at once.
 */
export async function fuzzDecode(count: number, seed = 1, concurrency = 4): Promise<FuzzResult> {
  const scene = createScene('reading-room', { width: 160, height: 120 });
  const raw = Buffer.from(Uint8Array.from(scene.frameAt(700).frame.data));
  const base = sharp(raw, { raw: { width: 160, height: 120, channels: 1 } });
  const seeds = await Promise.all([
    base.clone().jpeg({ quality: 80 }).toBuffer(),
    base.clone().jpeg({ quality: 60, progressive: true }).toBuffer(),
    base.clone().png().toBuffer(),
    base.clone().webp({ quality: 70 }).toBuffer(),
    base.clone().gif().toBuffer(),
  ]);
  const rand = mulberry(seed);
  const result: FuzzResult = { tried: 0, decoded: 0, refused: 0, unexpected: [], byKind: {}, rssGrowthMb: 0 };
  const startRss = process.memoryUsage().rss;
  let next = 0;
  async function worker(): Promise<void> {
    while (next < count) {
      const i = next++;
      const kind = Mutation[Math.floor(rand() * Mutation.length)];
      // Huge dimensions are declared in PNG and JPEG headers (the first three seeds).
      const pick = Math.floor(rand() * (kind === 'hugeDimensions' ? 3 : seeds.length));
      const input = mutateImage(seeds[pick], kind, rand);
      const name = `fuzz-${i}.img`;
      const stats = (result.byKind[kind] ??= { tried: 0, refused: 0 });
      stats.tried++;
      result.tried++;
      try {
        const frame = await decodeImage(input, { name, width: 160, height: 120, limitInputPixels: 50_000_000 });
        if (frame.data.length !== 160 * 120) result.unexpected.push(`${name} (${kind}): frame of ${frame.data.length} pixels`);
        else result.decoded++;
      } catch (error) {
        if (error instanceof FrameError && error.message.startsWith(`${name}: `)) {
          result.refused++;
          stats.refused++;
        } else {
          result.unexpected.push(`${name} (${kind}): ${(error as Error).name}: ${(error as Error).message}`);
        }
      }
    }
  }
  await Promise.all(Array.from({ length: concurrency }, worker));
  result.rssGrowthMb = (process.memoryUsage().rss - startRss) / 2 ** 20;
  return result;
}
