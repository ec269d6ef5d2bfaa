import type { FitSubspaceOptions, SubspaceFit } from '../vision/fitSubspace.ts';
import { startWorker } from './startWorker.ts';

/**
 * How the service learns from a live camera (the dashboard's "Learn again", and a camera's first
 * start without a model): robustly, rejecting people who pass through (`robustIterations` ≥ 1,
 * see fitSubspace), since a room is rarely quite empty for the whole learning time.
 */
export const liveLearning: FitSubspaceOptions = Object.freeze({ robustIterations: 2 });

/**
 * Fits the empty-scene subspace (after dropping repeated frames) in a worker thread, so that a
 * running service keeps counting its other cameras and answering the dashboard meanwhile: a fit
 * at 320×240 takes seconds. The frames are moved to the worker (the caller's arrays become
 * unusable); the model comes back the same way.
 */
export function learnInWorker(
  frames: Float32Array[],
  size: { width: number; height: number },
  options: FitSubspaceOptions = {},
): Promise<SubspaceFit> {
  return new Promise((resolve, reject) => {
    const worker = startWorker('learnWorker', {
      workerData: { frames, size: { width: size.width, height: size.height }, options },
      transferList: frames.map((f) => f.buffer as ArrayBuffer),
    });
    let settled = false;
    worker.once('message', (message: { model?: SubspaceFit; error?: string }) => {
      settled = true;
      void worker.terminate();
      if (message.model) resolve(message.model);
      else reject(new Error(message.error ?? 'learning failed'));
    });
    worker.once('error', (error) => {
      if (!settled) reject(error);
      settled = true;
    });
    worker.once('exit', (code) => {
      if (!settled) reject(new Error(`the learning worker stopped (exit code ${code})`));
      settled = true;
    });
  });
}
