import type { FrameItem } from '../frames/frame.ts';
import type { FrameSourceOptions } from '../frames/frameSourceOptions.ts';
import { openFrames } from '../frames/openFrames.ts';
import { createScene, sceneIds, syntheticFrames } from '../frames/synthetic/index.ts';
import { UsageError } from './args.ts';

/**
 * Opens what `--frames` names: a folder of images, a video file, or a built-in synthetic scene as
 * `synthetic:<scene>` (with people and items) or `synthetic:<scene>:empty` (the empty scene, for
 * learning). Synthetic scenes render at the requested working size.
 */
export function frameInput(spec: string, options: FrameSourceOptions): AsyncIterable<FrameItem> {
  const synthetic = /^synthetic:([a-z-]+)(:empty)?$/.exec(spec);
  if (!synthetic) return openFrames(spec, options);
  const id = synthetic[1];
  if (!(sceneIds as readonly string[]).includes(id)) {
    throw new UsageError(`--frames: no synthetic scene "${id}" (known: ${sceneIds.join(', ')})`);
  }
  const width = options.width ?? options.longSide ?? 320;
  const scene = createScene(id as (typeof sceneIds)[number], {
    width,
    height: options.height ?? Math.round((width * 3) / 4),
  });
  const every = options.every ?? 1;
  const count = options.limit ?? 600;
  return everyNth(syntheticFrames(scene, { count: count * every, empty: synthetic[2] !== undefined }), every);
}

async function* everyNth(items: AsyncIterable<FrameItem>, every: number): AsyncIterable<FrameItem> {
  let i = 0;
  for await (const item of items) if (i++ % every === 0) yield item;
}
