import { describe, expect, it } from 'vitest';
import { findPersonSize } from '../../src/counting/findPersonSize.ts';
import { createPlaza } from '../../src/frames/synthetic/plaza.ts';
import { syntheticFrames } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { prepareZones } from '../../src/vision/prepareZones.ts';

// Our own synthetic plaza: walkers under strong perspective, no person size given.
const scene = createPlaza({ shadows: false, standSeconds: 0 });
const span = 1500;
const model = fitSubspace(Array.from({ length: 200 }, (_, i) => scene.frameAt(Math.floor((i * span) / 200)).frame.data), scene, { robustIterations: 2 });

describe('findPersonSize', () => {
  it('finds how the size of one person changes with distance, from the frames alone', async () => {
    const found = await findPersonSize(model, scene.zones, syntheticFrames(scene, { count: span }));
    expect(found.applied).toContain('square');
    expect(found.continuity).toBeGreaterThan(0.8);
    const [near, far] = [0.85, 0.4].map((y) => {
      const zone = found.zones.find((z) => z.id === 'square')!;
      const [a, b] = zone.perspective!;
      const root = Math.sqrt(a.area) + ((Math.sqrt(b.area) - Math.sqrt(a.area)) * (y - a.y)) / (b.y - a.y);
      return root * root / scene.personAreaAt(y);
    });
    console.log(`found ÷ drawn person area: ${near.toFixed(2)} at row 0.85, ${far.toFixed(2)} at row 0.4`);
    // check: the scene's own drawn person area (personAreaAt, truth by construction). A blob is
    // not the drawn shape: the threshold trims soft edges and the closing adds a band of about a
    // pixel, which is a large share of a person 7 pixels wide far away (measured 1.09 near, 1.36
    // far), so within 40 %.
    for (const ratio of [near, far]) {
      expect(ratio).toBeGreaterThan(0.6);
      expect(ratio).toBeLessThan(1.4);
    }
  });

  it('warns when a zone gives a person size far from what the frames show', async () => {
    const zones = scene.zones.map((z) => ({ ...z, personArea: scene.personAreaAt(0.6) * 4 }));
    const found = await findPersonSize(model, zones, syntheticFrames(scene, { count: 600 }));
    expect(found.applied).toEqual([]);
    expect(found.mismatches.some((m) => /zone square: its personArea .* times larger/.test(m))).toBe(true);
  });
});

describe('prepareZones perspective guards', () => {
  const size = { width: 100, height: 100 };
  const perspective = [{ y: 0.5, area: 0.004 }, { y: 1, area: 0.016 }];
  it('holds the line beyond the reference rows and caps the area ratio (worked example of guardedAreaAt)', () => {
    // check: worked by hand: √area = 0.12649·y; at row 0.4 (the reach limit) 0.00256 of the frame.
    const [zone] = prepareZones([{ id: 'z', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], perspective }], size);
    const at = (row: number) => zone.personPixelsAt!(row * 100 - 0.5) / 10000;
    expect(at(1)).toBeCloseTo(0.016, 5);
    expect(at(0.2)).toBeCloseTo(0.00256, 5);
    const [capped] = prepareZones([{ id: 'z', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], perspective }], size, { maxPerspectiveRatio: 4 });
    expect(capped.personPixelsAt!(0.2 * 100 - 0.5) / 10000).toBeCloseTo(0.004, 5);
    // The smallest blob follows the row: a quarter of the person there.
    expect(zone.minBlobPixelsAt!(99.5)).toBeCloseTo(0.25 * 0.016 * 10000, 3);
    expect(() => prepareZones([], size, { maxPerspectiveRatio: 0.5 })).toThrow(/maxPerspectiveRatio/);
  });
});
