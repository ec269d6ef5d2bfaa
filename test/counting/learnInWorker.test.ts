import { describe, expect, it } from 'vitest';
import { learnInWorker } from '../../src/counting/learnInWorker.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';

describe('learnInWorker', () => {
  it('gives the same model as fitting in the main thread, without blocking it', async () => {
    const scene = createScene('stock-room', { width: 160, height: 120 });
    const frames = () => Array.from({ length: 40 }, (_, i) => scene.emptyFrameAt(i * 75).data);
    const direct = fitSubspace(frames(), scene, { components: 4 });
    let ticks = 0;
    const timer = setInterval(() => ticks++, 5);
    const fromWorker = await learnInWorker(frames(), scene, { components: 4 });
    clearInterval(timer);
    expect(fromWorker.components).toBe(4);
    expect(Array.from(fromWorker.mean)).toEqual(Array.from(direct.mean));
    expect(Array.from(fromWorker.basis)).toEqual(Array.from(direct.basis));
    expect(Array.from(fromWorker.noise)).toEqual(Array.from(direct.noise));
    // The main thread's timers ran while the worker fitted.
    expect(ticks).toBeGreaterThan(0);
  });

  it('reports a failure as a rejected promise', async () => {
    await expect(learnInWorker([new Float32Array(4)], { width: 2, height: 2 })).rejects.toThrow(/at least 2 frames/);
  });
});
