import { describe, expect, it } from 'vitest';
import { createCounter } from '../../src/counting/createCounter.ts';
import { createScene, type SceneId } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';

// Our own invented scenario (no outside source): the synthetic reading room and stock room,
// whose renderer knows the exact count and fill of every zone in every frame.

interface ZoneScore {
  frames: number;
  exact: number;
  absError: number;
  bias: number;
  fillError: number;
}

/** Learns on 200 empty frames spread over the lighting cycle, then counts every 10th frame of 0..5990. */
function score(id: SceneId): Record<string, ZoneScore> {
  const scene = createScene(id, {});
  const model = fitSubspace(Array.from({ length: 200 }, (_, i) => scene.emptyFrameAt(i * 15).data), scene);
  const counter = createCounter(model, scene.zones);
  const scores: Record<string, ZoneScore> = {};
  for (let t = 0; t < 6000; t += 10) {
    const { frame, truth } = scene.frameAt(t);
    const result = counter.count(frame);
    for (const zone of scene.zones) {
      const s = (scores[zone.id] ??= { frames: 0, exact: 0, absError: 0, bias: 0, fillError: 0 });
      const got = result.zones[zone.id];
      const want = truth[zone.id];
      s.frames++;
      if (got.count === want.count) s.exact++;
      s.absError += Math.abs(got.count - want.count);
      s.bias += got.count - want.count;
      if (want.fill !== undefined) s.fillError += Math.abs(got.fill - want.fill);
    }
  }
  for (const [zone, s] of Object.entries(scores)) {
    console.log(`${id} ${zone}: exact ${(s.exact / s.frames * 100).toFixed(1)} %, count MAE ${(s.absError / s.frames).toFixed(3)}, ` +
      `bias ${(s.bias / s.frames).toFixed(3)}${id === 'stock-room' ? `, fill MAE ${(s.fillError / s.frames).toFixed(4)}` : ''} over ${s.frames} frames`);
  }
  return scores;
}

describe('counting accuracy on the synthetic scenes', () => {
  // Bounds documented in README ("Accuracy"): per zone, exact-match share and mean absolute error.
  it('counts people per zone in the reading room', () => {
    const scores = score('reading-room');
    for (const s of Object.values(scores)) {
      expect(s.exact / s.frames).toBeGreaterThanOrEqual(0.8);
      expect(s.absError / s.frames).toBeLessThanOrEqual(0.3);
    }
  });

  it('measures fill and counts items on the stock-room shelves', () => {
    const scores = score('stock-room');
    for (const s of Object.values(scores)) {
      expect(s.exact / s.frames).toBeGreaterThanOrEqual(0.8);
      expect(s.absError / s.frames).toBeLessThanOrEqual(0.3);
      expect(s.fillError / s.frames).toBeLessThanOrEqual(0.03);
    }
  });
});
