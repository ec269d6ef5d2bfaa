import { stat } from 'node:fs/promises';
import type { ColourFrameItem } from '../domain/colourFrame.ts';
import type { FrameItem } from '../domain/frame.ts';
import { FrameError } from '../frames/FrameError.ts';
import type { FrameSourceOptions } from '../frames/frameSourceOptions.ts';
import { openFrames } from '../frames/openFrames.ts';
import { readImageFolder } from '../frames/readImageFolder.ts';
import { createScene, sceneIds, syntheticFrames } from '../frames/synthetic/index.ts';
import { createShadowRoom } from '../frames/synthetic/shadowRoom.ts';
import { syntheticColourFrames } from '../frames/synthetic/syntheticColourFrames.ts';
import { UsageError } from './args.ts';

/** The synthetic scene with shadows and colour (src/frames/synthetic/shadowRoom.ts). */
const colourSceneId = 'shadow-room';

/** Options of {@link frameInput}. */
export interface FrameInputOptions extends FrameSourceOptions {
  /** Colour mode: each item also carries its colour frame (folders of images and colour scenes only). Default false. */
  colour?: boolean;
}

/**
 * Opens what `--frames` names: a folder of images, a video file, or a built-in synthetic scene as
 * `synthetic:<scene>` (with people and items) or `synthetic:<scene>:empty` (the empty scene, for
 * learning); `synthetic:shadow-room` is the reading room with shadows and colour. Synthetic
 * scenes render at the requested working size.
 *
 * With `colour`, items carry the colour frame too: from a folder of images (readImageFolder with `colour`) or
 * from `synthetic:shadow-room`; a video file or a grey-only scene is a UsageError.
 */
export function frameInput(spec: string, options: FrameInputOptions & { colour: true }): AsyncIterable<ColourFrameItem>;
export function frameInput(spec: string, options: FrameInputOptions): AsyncIterable<FrameItem>;
export function frameInput(spec: string, options: FrameInputOptions): AsyncIterable<FrameItem | ColourFrameItem> {
  const { colour = false, ...sourceOptions } = options;
  const synthetic = /^synthetic:([a-z-]+)(:empty)?$/.exec(spec);
  if (!synthetic) return colour ? colourFolder(spec, sourceOptions) : openFrames(spec, sourceOptions);
  const id = synthetic[1];
  if (id !== colourSceneId && !(sceneIds as readonly string[]).includes(id)) {
    throw new UsageError(`--frames: no synthetic scene "${id}" (known: ${[...sceneIds, colourSceneId].join(', ')})`);
  }
  if (colour && id !== colourSceneId) {
    throw new UsageError(`--colour: the synthetic scene "${id}" is grey only; the colour scene is synthetic:${colourSceneId}`);
  }
  const width = sourceOptions.width ?? sourceOptions.longSide ?? 320;
  const size = { width, height: sourceOptions.height ?? Math.round((width * 3) / 4) };
  const every = sourceOptions.every ?? 1;
  const count = sourceOptions.limit ?? 600;
  const empty = synthetic[2] !== undefined;
  if (id === colourSceneId) {
    const scene = createShadowRoom(size);
    return colour
      ? everyNth(syntheticColourFrames(scene, { count: count * every, empty }), every)
      : everyNth(syntheticFrames(scene, { count: count * every, empty }), every);
  }
  const scene = createScene(id as (typeof sceneIds)[number], size);
  return everyNth(syntheticFrames(scene, { count: count * every, empty }), every);
}

/** Colour frames from a folder of images; a video file is refused (colour video is not read yet). */
async function* colourFolder(path: string, options: FrameSourceOptions): AsyncGenerator<ColourFrameItem> {
  let isFolder: boolean;
  try {
    isFolder = (await stat(path)).isDirectory();
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    throw new FrameError(path, code === 'ENOENT' ? 'no such file or folder' : (error as Error).message, { cause: error });
  }
  if (!isFolder) {
    throw new UsageError(`--colour reads a folder of images or synthetic:${colourSceneId}; ${path} is not a folder (video files are read in grey only)`);
  }
  yield* readImageFolder(path, { ...options, colour: true });
}

async function* everyNth<T>(items: AsyncIterable<T>, every: number): AsyncIterable<T> {
  let i = 0;
  for await (const item of items) if (i++ % every === 0) yield item;
}
