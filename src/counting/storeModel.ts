import type { ModelInfo, Store } from '../store/index.ts';
import type { Subspace } from '../vision/subspace.ts';
import { colourModelFormatVersion, decodeModel, encodeModel, modelFormatVersion } from './modelFile.ts';
import { modelVerdict, type ModelVerdict } from './modelVerdict.ts';

/** What is kept of a model's verdict with it: the level and the findings, in plain sentences. */
export type StoredVerdict = Pick<ModelVerdict, 'level' | 'findings'>;

export interface StoreModelOptions {
  /** The model's verdict, kept in its metadata; default `modelVerdict(model)`. */
  readonly verdict?: StoredVerdict;
  /** Make it the camera's active model; default true. */
  readonly activate?: boolean;
  /** Stored as learned but not usable (kept for an admin to choose); default false. */
  readonly rejected?: boolean;
  /** Then keep at most this many of the camera's models, the active one among them (1..10 000); default: delete none. */
  readonly keep?: number;
}

/**
 * Stores `model` for `camera` (the model file's bytes, see modelFile.ts), with its figures and
 * verdict (level and findings) as metadata (with its colour statistics, if any: model file
 * version 2); `source` says where it came from (a file, `live source`, `synthetic:<scene>:empty`).
 * By default it becomes the camera's active model; `keep` deletes the camera's older models
 * beyond that many in the same transaction (never the active one). Returns the model's id. Used
 * by the main thread (configured model files, synthetic scenes), by a camera's pipeline (models
 * learned from the live source) and by `residuum learn --config`.
 *
 * ```ts
 * storeModel(store, 'door', model, 'live source', { keep: 5 }); // store.activeModel('door') is it now
 * storeModel(store, 'door', poor, 'live source', { activate: false, rejected: true, keep: 5 }); // kept, not used
 * ```
 */
export function storeModel(store: Pick<Store, 'insertModel'>, camera: string, model: Subspace, source: string, options: StoreModelOptions = {}): number {
  const { activate = true, rejected = false, keep } = options;
  const judged = modelVerdict(model);
  const verdict = options.verdict ?? judged;
  return store.insertModel(
    {
      camera,
      width: model.width,
      height: model.height,
      components: model.components,
      formatVersion: model.colour === undefined ? modelFormatVersion : colourModelFormatVersion,
      data: encodeModel(model, { learnedAt: new Date().toISOString(), source }, model.colour),
      metadata: { source, frames: model.frameCount, retainedVariance: model.retainedVariance, medianNoise: judged.medianNoise, verdict: verdict.level, findings: [...verdict.findings] },
      rejected,
    },
    { activate, ...(keep !== undefined && { keep }) },
  );
}

/**
 * The verdict kept with a stored model. Models stored before the findings were kept (their
 * metadata has the level only, or nothing) are decoded with `load` and judged again.
 *
 * ```ts
 * storedVerdict(info, () => store.getModel(info.id)?.data); // { level: 'good', findings: [...] }
 * ```
 */
export function storedVerdict(info: Pick<ModelInfo, 'id' | 'metadata'>, load: () => Uint8Array | undefined): StoredVerdict {
  const m = (info.metadata ?? {}) as { verdict?: unknown; findings?: unknown };
  const level = m.verdict;
  if ((level === 'good' || level === 'fair' || level === 'poor') && Array.isArray(m.findings) && m.findings.every((f) => typeof f === 'string')) {
    return { level, findings: m.findings as string[] };
  }
  const data = load();
  if (data === undefined) return { level: 'poor', findings: ['the stored model could not be read'] };
  try {
    const { model } = decodeModel(Buffer.from(data.buffer, data.byteOffset, data.byteLength), `stored model ${info.id}`);
    const { level: judged, findings } = modelVerdict(model);
    return { level: judged, findings };
  } catch (error) {
    return { level: 'poor', findings: [`the stored model could not be read (${(error as Error).message})`] };
  }
}

/** What to do with a newly learned model, and how to say it (see {@link learningOutcome}). */
export interface LearningOutcome {
  /** Put it to use (make it active). */
  readonly use: boolean;
  /** The event to store: `model-learned` (in use) or `learning-rejected`. */
  readonly event: 'model-learned' | 'learning-rejected';
  /** Why it is poor, in plain words (its first finding), when it is. */
  readonly reason?: string;
  /** One plain sentence or two for the event and the log. */
  readonly text: string;
}

/**
 * The rule for a newly learned model: a 'poor' one never replaces a working model (it is kept,
 * rejected, and the camera counts on with the model it had); with no model at all, even a poor
 * one is used, since something beats nothing.
 *
 * ```ts
 * learningOutcome({ level: 'poor', findings: ['residual noise is high …'] }, true).use; // false
 * ```
 */
export function learningOutcome(verdict: StoredVerdict, hadModel: boolean): LearningOutcome {
  const { level, findings } = verdict;
  const first = findings[0] ?? 'the model does not explain the view';
  if (level !== 'poor') return { use: true, event: 'model-learned', text: `The new empty scene is in use (${level}): ${first}.` };
  if (!hadModel) {
    return { use: true, event: 'model-learned', reason: first, text: `The new empty scene is poor but in use, as the camera had none: ${first}. Learn again with the view empty.` };
  }
  return { use: false, event: 'learning-rejected', reason: first, text: `The new empty scene was not used: ${first}. Counting goes on with the model from before.` };
}
