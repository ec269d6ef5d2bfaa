import type { Subspace } from '../vision/subspace.ts';

/**
 * The model with its three large arrays (mean, basis, noise: about 2.9 MB at 320×240 with 8
 * components) in shared memory, so that the main thread (background image, model figures) and the
 * camera's worker thread (counting) hold one copy between them: a Float32Array over a
 * SharedArrayBuffer is shared, not copied, by postMessage (HTML Living Standard, "structured
 * serialize"; Node.js worker_threads, port.postMessage). Returns `model` itself when its arrays
 * are shared already; never changes `model`. Nobody writes a model's arrays after it is fitted.
 *
 * ```ts
 * const shared = shareModel(model);           // copies once
 * shareModel(shared) === shared;              // true
 * worker.postMessage({ model: shared });      // no copy of the arrays
 * ```
 */
export function shareModel<T extends Subspace>(model: T): T {
  if (isShared(model.mean) && isShared(model.basis) && isShared(model.noise)) return model;
  return { ...model, mean: shared(model.mean), basis: shared(model.basis), noise: shared(model.noise) };
}

function isShared(array: Float32Array): boolean {
  return array.buffer instanceof SharedArrayBuffer;
}

function shared(array: Float32Array): Float32Array {
  const out = new Float32Array(new SharedArrayBuffer(array.byteLength));
  out.set(array);
  return out;
}
