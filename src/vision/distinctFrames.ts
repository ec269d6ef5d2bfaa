/**
 * The frames without those identical to the frame before them. A repeated picture (a container
 * that holds a frame on screen for several ticks, a camera that did not refresh) adds nothing to
 * a model but weight, so learning drops it.
 *
 * Example: [a, a, b, a] → [a, b, a].
 */
export function distinctFrames<T extends ArrayLike<number>>(frames: readonly T[]): T[] {
  return frames.filter((frame, t) => t === 0 || !sameValues(frame, frames[t - 1]));
}

function sameValues(a: ArrayLike<number>, b: ArrayLike<number>): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}
