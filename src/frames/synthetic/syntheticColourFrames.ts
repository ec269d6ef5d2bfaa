/**
 * A colour synthetic scene as a colour frame source: the `AsyncIterable<ColourFrameItem>` of the
 * colour mode, as syntheticFrames is for grey.
 */
import type { ColourFrameItem } from '../../domain/colourFrame.ts';
import { assertFrameIndex } from './scene.ts';
import type { ShadowRoomScene } from './shadowRoom.ts';
import type { SyntheticFramesOptions } from './syntheticFrames.ts';

/**
 * Frames start, start + 1, … of `scene` in grey and colour, each named by its index; the same
 * options and pacing as syntheticFrames (`empty` yields emptyColourFrameAt).
 *
 * Example: for await (const item of syntheticColourFrames(createShadowRoom(), { count: 2 })) →
 * names '0', '1', each with `frame` and `colour`.
 */
export async function* syntheticColourFrames(scene: ShadowRoomScene, options: SyntheticFramesOptions = {}): AsyncGenerator<ColourFrameItem> {
  const { start = 0, count = Infinity, empty = false, signal } = options;
  assertFrameIndex(start, 'start');
  if (count !== Infinity && !(Number.isSafeInteger(count) && count >= 0)) {
    throw new RangeError(`count must be a whole number ≥ 0 or Infinity, got ${String(count)}`);
  }
  if (signal !== undefined && !(signal instanceof AbortSignal)) throw new TypeError('signal must be an AbortSignal');
  for (let k = 0; k < count; k++) {
    signal?.throwIfAborted();
    const t = start + k;
    let item: ColourFrameItem;
    try {
      const { frame, colour } = empty ? scene.emptyColourFrameAt(t) : scene.colourFrameAt(t);
      item = { name: String(t), frame, colour };
    } catch (error) {
      item = { name: String(t), error: error instanceof Error ? error : new Error(String(error)) };
    }
    yield item;
    await new Promise<void>((resolve) => setImmediate(resolve));
  }
}
