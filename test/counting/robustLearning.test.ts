import { describe, expect, it } from 'vitest';
import { createCounter } from '../../src/counting/createCounter.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import type { Subspace } from '../../src/vision/subspace.ts';

// Our own synthetic reading room (invented data, exact truth).
const scene = createScene('reading-room', {});

function countError(model: Subspace): { mae: number; exact: number } {
  const counter = createCounter(model, scene.zones);
  let abs = 0;
  let exact = 0;
  let cells = 0;
  for (let t = 0; t < 6000; t += 40) {
    const { frame, truth } = scene.frameAt(t);
    const result = counter.count(frame);
    for (const zone of scene.zones) {
      const e = Math.abs(result.zones[zone.id].count - truth[zone.id].count);
      abs += e;
      exact += e === 0 ? 1 : 0;
      cells++;
    }
  }
  return { mae: abs / cells, exact: exact / cells };
}

describe('robust learning with people passing through', () => {
  it('counts about as well as a model learned from truly empty frames', () => {
    const empty = fitSubspace(Array.from({ length: 200 }, (_, i) => scene.emptyFrameAt(i * 15).data), scene);
    // The same moments of the scene, but with the people in them.
    const busyFrames = Array.from({ length: 200 }, (_, i) => scene.frameAt(i * 15 + 7).frame.data);
    const robust = fitSubspace(busyFrames, scene, { robustIterations: 1 });
    const reference = countError(empty);
    const learned = countError(robust);
    console.log(`counts with a model from empty frames: MAE ${reference.mae.toFixed(3)}, exact ${(reference.exact * 100).toFixed(1)} %; ` +
      `robust model from frames with people: MAE ${learned.mae.toFixed(3)}, exact ${(learned.exact * 100).toFixed(1)} %, ` +
      `${(robust.rejectedShare * 100).toFixed(1)} % of learning pixels rejected`);
    // Tolerance documented in README ("Learning while people pass through").
    expect(learned.mae).toBeLessThanOrEqual(reference.mae + 0.1);
    expect(learned.exact).toBeGreaterThanOrEqual(reference.exact - 0.05);
    expect(robust.rejectedShare).toBeGreaterThan(0.01);
  });
});
