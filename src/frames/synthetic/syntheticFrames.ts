/**
 * A synthetic scene as a frame source: the same `AsyncIterable<FrameItem>` as the folder and video
 * sources, so the CLI and the counter read a synthetic scene like any camera.
 */
import type { FrameItem } from '../../domain/frame.ts';
import { assertFrameIndex, type SyntheticScene } from './scene.ts';

export interface SyntheticFramesOptions {
  /** First frame index, a whole number ≥ 0; default 0. */
  start?: number;
  /** Number of frames, a whole number ≥ 0 or Infinity (an endless live source); default Infinity. */
  count?: number;
  /** Yield empty-scene frames (emptyFrameAt) instead of frames with people/items; default false. */
  empty?: boolean;
  /** Stops the iteration: the iterator then throws the signal's reason. */
  signal?: AbortSignal;
}

/**
 * Frames start, start + 1, … of `scene`, each named by its index (`name = String(t)`). Frames are
 * produced as fast as they are read (pacing to `scene.frameRate` is the reader's business); the
 * iterator gives the event loop a turn between frames, so an endless source does not starve it.
 *
 * Example: for await (const item of syntheticFrames(createReadingRoom(), { count: 3 })) → names '0', '1', '2'.
 */
export async function* syntheticFrames(scene: SyntheticScene, options: SyntheticFramesOptions = {}): AsyncGenerator<FrameItem> {
  const { start = 0, count = Infinity, empty = false, signal } = options;
  assertFrameIndex(start, 'start');
  if (count !== Infinity && !(Number.isSafeInteger(count) && count >= 0)) {
    throw new RangeError(`count must be a whole number ≥ 0 or Infinity, got ${String(count)}`);
  }
  if (signal !== undefined && !(signal instanceof AbortSignal)) throw new TypeError('signal must be an AbortSignal');
  for (let k = 0; k < count; k++) {
    signal?.throwIfAborted();
    const t = start + k;
    let item: FrameItem;
    try {
      item = { name: String(t), frame: empty ? scene.emptyFrameAt(t) : scene.frameAt(t).frame };
    } catch (error) {
      item = { name: String(t), error: error instanceof Error ? error : new Error(String(error)) };
    }
    yield item;
    await new Promise<void>((resolve) => setImmediate(resolve));
  }
}
