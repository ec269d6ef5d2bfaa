import { parentPort, workerData } from 'node:worker_threads';
import { distinctFrames } from '../vision/distinctFrames.ts';
import { fitSubspace, type FitSubspaceOptions } from '../vision/fitSubspace.ts';

/** Runs in a worker thread: fits the subspace to the frames it was given and posts the model back. */
const { frames, size, options } = workerData as {
  frames: Float32Array[];
  size: { width: number; height: number };
  options: FitSubspaceOptions;
};
try {
  const model = fitSubspace(distinctFrames(frames), size, options);
  parentPort!.postMessage({ model }, [model.mean.buffer, model.basis.buffer, model.noise.buffer] as ArrayBuffer[]);
} catch (error) {
  parentPort!.postMessage({ error: (error as Error).message });
}
