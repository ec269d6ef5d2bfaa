import { MessageChannel } from 'node:worker_threads';
import { describe, expect, it } from 'vitest';
import { shareModel } from '../../src/counting/shareModel.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import type { Subspace } from '../../src/vision/subspace.ts';

const scene = createScene('reading-room', { width: 64, height: 48 });
const model = fitSubspace(Array.from({ length: 20 }, (_, i) => scene.emptyFrameAt(i * 150).data), scene, { components: 3 });

/** Posts `value` through a MessageChannel and returns what arrives on the other port. */
function throughChannel<T>(value: T): Promise<T> {
  const { port1, port2 } = new MessageChannel();
  return new Promise((resolve) => {
    port2.once('message', (received: T) => {
      port1.close();
      port2.close();
      resolve(received);
    });
    port1.postMessage(value);
  });
}

describe('shareModel', () => {
  it('copies mean, basis and noise into shared memory, leaving the model as it was', () => {
    const shared = shareModel(model);
    for (const key of ['mean', 'basis', 'noise'] as const) {
      expect(shared[key].buffer).toBeInstanceOf(SharedArrayBuffer);
      expect(model[key].buffer).not.toBeInstanceOf(SharedArrayBuffer);
      expect(Array.from(shared[key])).toEqual(Array.from(model[key]));
    }
    expect({ ...shared, mean: 0, basis: 0, noise: 0 }).toEqual({ ...model, mean: 0, basis: 0, noise: 0 });
    expect(shareModel(shared)).toBe(shared);
  });

  it('is shared, not copied, by postMessage; a plain model is copied', async () => {
    // check: HTML Living Standard, StructuredSerialize — a SharedArrayBuffer is serialized as a
    // reference to the same memory, an ArrayBuffer as a copy (recalled from memory); Node.js
    // MessagePort.postMessage follows it.
    const shared = shareModel(model);
    const received: Subspace = await throughChannel(shared);
    const before = shared.mean[5];
    received.mean[5] = before + 1;
    expect(shared.mean[5]).toBe(before + 1);
    received.mean[5] = before;

    const copy: Subspace = await throughChannel(model);
    copy.mean[5] = model.mean[5] + 1;
    expect(copy.mean[5]).not.toBe(model.mean[5]);
  });
});
