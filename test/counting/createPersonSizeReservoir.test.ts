import { describe, expect, it } from 'vitest';
import { createPersonSizeReservoir, type CountedFrame } from '../../src/counting/createPersonSizeReservoir.ts';
import type { Zone } from '../../src/domain/zone.ts';
import { random } from '../../src/frames/synthetic/index.ts';
import type { Blob } from '../../src/vision/labelComponents.ts';
import { prepareZones } from '../../src/vision/prepareZones.ts';

const SIZE = { width: 200, height: 200 };
const floor: Zone = { id: 'floor', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], minBlobArea: 0.0005 };
const shelf: Zone = { id: 'shelf', kind: 'shelf', polygon: [[0.6, 0], [1, 0], [1, 0.3], [0.6, 0.3]] };
const zones = prepareZones([floor, shelf], SIZE);

/** A blob with the given bounding box (inclusive pixel rows and columns) and area, as labelComponents reports it. */
function blob(label: number, x0: number, y0: number, x1: number, y1: number, area: number): Blob {
  return { label, area, x0, y0, x1, y1, cx: (x0 + x1) / 2, cy: (y0 + y1) / 2, footX: (x0 + x1) / 2, footY: y1 };
}

/** A person with feet at normalised row y whose √area is 0.1·y (area as a share of the frame), 2.5 times as tall as wide in pixels. */
function person(label: number, y: number, x = 0.3): Blob {
  const area = Math.round((0.1 * y) ** 2 * SIZE.width * SIZE.height);
  const h = Math.round(Math.sqrt(area * 2.5));
  const w = Math.max(1, Math.round(area / h));
  const footY = Math.round(y * SIZE.height - 0.5);
  const x0 = Math.round(x * SIZE.width - w / 2);
  return blob(label, x0, footY - h + 1, x0 + w - 1, footY, area);
}

const frame = (blobs: Blob[], count = blobs.length): CountedFrame => ({ blobs, zones: { floor: { count }, shelf: { count: 0 } } });

describe('createPersonSizeReservoir', () => {
  it('learns the size of one person walking alone (the example in its doc comment)', () => {
    const reservoir = createPersonSizeReservoir(SIZE, { random: () => 0.5 });
    for (let t = 0; t < 500; t++) reservoir.observe(frame([person(1, 0.4 + (0.55 * t) / 499)]), zones);
    const s = reservoir.suggestion();
    // Every 5th frame is looked at: 100 frames, of which the first comes before the count was steady for 5 frames.
    expect(s).toMatchObject({ state: 'ready', observations: 99, seen: 99, supporting: 99 });
    // check: the line √area = 0.1·y the blobs were made from (fitPersonArea's model), up to whole pixels
    expect(s.slope!).toBeCloseTo(0.1, 2);
    expect(Math.abs(s.intercept!)).toBeLessThan(0.003);
    // Boxes 2.5 times as tall as wide in pixels, in a square frame: the same in shares of the frame.
    expect(s.aspect!).toBeGreaterThan(2.2);
    expect(s.aspect!).toBeLessThan(2.8);
    expect(s.rows![0]).toBeCloseTo(0.455, 1);
    expect(s.rows![1]).toBeCloseTo(0.895, 1);
  });

  it('keeps only blobs that look like one person alone in a steady scene', () => {
    const kept = (blobs: Blob[], counts: number[] = [1, 1, 1, 1, 1]) => {
      const reservoir = createPersonSizeReservoir(SIZE, { every: 1 });
      for (const count of counts) reservoir.observe(frame(blobs, count), zones);
      return reservoir.observations().length;
    };
    const alone = person(1, 0.7);
    // Five steady frames, every frame looked at: the fifth has a count that stayed the same for 5 frames.
    expect(kept([alone])).toBe(1);
    // The count changed within the last 5 frames (someone came in): nothing is kept.
    expect(kept([alone], [1, 2, 1, 1, 1])).toBe(0);
    // Another blob 2 pixels to the right of its box (inside the margin): neither is kept.
    const near = blob(2, alone.x1 + 2, alone.y0, alone.x1 + 10, alone.y1, 150);
    expect(kept([alone, near], [2, 2, 2, 2, 2])).toBe(0);
    // 3 pixels away is outside the 2-pixel margin: both are kept.
    const apart = blob(2, alone.x1 + 3, alone.y0, alone.x1 + 3 + (alone.x1 - alone.x0), alone.y1, alone.area);
    expect(kept([alone, apart], [2, 2, 2, 2, 2])).toBe(2);
    // Cut off by the frame's left edge.
    expect(kept([blob(1, 0, 100, 10, 140, 300)])).toBe(0);
    // Wider than tall (two people side by side, or a bag): height ÷ width 0.8 < 1.2.
    expect(kept([blob(1, 50, 100, 74, 119, 400)])).toBe(0);
    // Smaller than the zone's smallest blob (0.0005 of 40 000 pixels = 20).
    expect(kept([blob(1, 50, 100, 53, 109, 19)])).toBe(0);
    // In the shelf zone only (the room zone is cut out by giving it another polygon).
    const roomBelow = prepareZones([{ ...floor, polygon: [[0, 0.5], [1, 0.5], [1, 1], [0, 1]] }, shelf], SIZE);
    const onShelf = createPersonSizeReservoir(SIZE, { every: 1 });
    for (let t = 0; t < 5; t++) onShelf.observe({ blobs: [blob(1, 150, 20, 160, 45, 200)], zones: { floor: { count: 0 }, shelf: { count: 1 } } }, roomBelow);
    expect(onShelf.observations()).toEqual([]);
  });

  it('looks at every 5th frame by default and stays bounded, spread over the rows', () => {
    const reservoir = createPersonSizeReservoir(SIZE, { random: random(3).uniform });
    const rnd = random(4);
    for (let t = 0; t < 20_000; t++) reservoir.observe(frame([person(1, rnd.between(0.3, 0.98))]), zones);
    const kept = reservoir.observations();
    // 4 000 frames looked at, each with one person seen alone (but the first, before the count was
    // steady); at most 32 kept in each of 16 bands of rows.
    expect(reservoir.suggestion().seen).toBe(3999);
    expect(kept.length).toBeLessThanOrEqual(16 * 32);
    const perBand = new Map<number, number>();
    for (const o of kept) perBand.set(Math.floor(o.y * 16), (perBand.get(Math.floor(o.y * 16)) ?? 0) + 1);
    expect(Math.max(...perBand.values())).toBe(32);
    // The bands the rows 0.3–0.98 cover are all filled: 0.3·16 = 4.8 → band 4 up to band 15.
    expect([...perBand.keys()].sort((a, b) => a - b)).toEqual([4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15]);
    expect(reservoir.suggestion().state).toBe('ready');
    reservoir.clear();
    expect(reservoir.observations()).toEqual([]);
    expect(reservoir.suggestion()).toMatchObject({ state: 'too-few', observations: 0, seen: 0, message: '0 people seen alone so far; 30 are needed' });
  });

  it('names a bad option', () => {
    expect(() => createPersonSizeReservoir(SIZE, { perBand: 0 })).toThrow('options.perBand must be a whole number ≥ 1, got 0');
    expect(() => createPersonSizeReservoir(SIZE, { aspect: [3, 2] })).toThrow(/options\.aspect/);
    expect(() => createPersonSizeReservoir(SIZE, { margin: -1 })).toThrow(/options\.margin/);
  });
});
