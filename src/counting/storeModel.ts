import type { Store } from '../store/index.ts';
import type { Subspace } from '../vision/subspace.ts';
import { colourModelFormatVersion, encodeModel, modelFormatVersion } from './modelFile.ts';
import { modelVerdict } from './modelVerdict.ts';

/**
 * Stores `model` as `camera`'s newest model (the model file's bytes, see modelFile.ts), with its
 * figures and verdict as metadata (with its colour statistics, if any: model file version 2); `source` says where it came from (a file, `live source`,
 * `synthetic:<scene>:empty`). Returns the model's id. Used by the main thread (configured model
 * files, synthetic scenes) and by a camera's worker (models learned from the live source).
 *
 * ```ts
 * storeModel(store, 'door', model, 'live source'); // store.latestModel('door') is it now
 * ```
 */
export function storeModel(store: Pick<Store, 'insertModel'>, camera: string, model: Subspace, source: string): number {
  const verdict = modelVerdict(model);
  return store.insertModel({
    camera,
    width: model.width,
    height: model.height,
    components: model.components,
    formatVersion: model.colour === undefined ? modelFormatVersion : colourModelFormatVersion,
    data: encodeModel(model, { learnedAt: new Date().toISOString(), source }, model.colour),
    metadata: { source, frames: model.frameCount, retainedVariance: model.retainedVariance, medianNoise: verdict.medianNoise, verdict: verdict.level },
  });
}
