import { describe, expect, it } from 'vitest';
import { createMask } from '../../src/domain/frame.ts';
import { measureZoneForeground } from '../../src/vision/measureZoneForeground.ts';
import { prepareZones } from '../../src/vision/prepareZones.ts';

describe('measureZoneForeground', () => {
  const size = { width: 20, height: 10 };
  const square = (mask: ReturnType<typeof createMask>, x0: number, y0: number, side: number) => {
    for (let y = y0; y < y0 + side; y++) for (let x = x0; x < x0 + side; x++) mask.data[y * size.width + x] = 1;
  };

  it('measures area in people and edge in person heights', () => {
    // A person area of 9 pixels (0.045 of 200); one 3×3 square is one person, its edge the 8
    // pixels around its centre, each 1/√9.
    const [zone] = prepareZones([{ id: 'z', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], personArea: 9 / 200 }], size);
    const mask = createMask(size.width, size.height);
    square(mask, 2, 2, 3);
    // check: worked by hand (area 9 / 9 = 1; edge 8 × 1/3).
    const one = measureZoneForeground(mask, [zone])[0];
    expect(one.area).toBeCloseTo(1, 12);
    expect(one.edge).toBeCloseTo(8 / 3, 12);
    square(mask, 10, 5, 3);
    const two = measureZoneForeground(mask, [zone])[0];
    expect(two.area).toBeCloseTo(2, 12);
    expect(two.edge).toBeCloseTo(16 / 3, 12);
  });

  it('weights pixels by the person size at their row (perspective)', () => {
    // Person 4 pixels at row 2 (y 0.25) and 16 at row 7.5 (y 0.8): √area grows linearly with the row.
    const zones = prepareZones([{ id: 'z', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], perspective: [{ y: 0.25, area: 4 / 200 }, { y: 0.8, area: 16 / 200 }] }], size);
    const mask = createMask(size.width, size.height);
    square(mask, 2, 1, 2); // a far person: rows 1–2
    const far = measureZoneForeground(mask, zones)[0];
    const expected = [1, 2].reduce((s, y) => s + 2 / zones[0].personPixelsAt!(y), 0);
    // check: worked by hand from the zone's own perspective line.
    expect(far.area).toBeCloseTo(expected, 12);
    expect(far.area).toBeGreaterThan(0.8);
    expect(far.area).toBeLessThan(1.3);
  });

  it('counts only the zone\'s own pixels, and the frame edge as an edge', () => {
    const [left] = prepareZones([{ id: 'left', kind: 'room', polygon: [[0, 0], [0.5, 0], [0.5, 1], [0, 1]], personArea: 0.045 }], size);
    const mask = createMask(size.width, size.height);
    square(mask, 0, 0, 3);
    square(mask, 14, 4, 3);
    const { area, edge } = measureZoneForeground(mask, [left])[0];
    expect(area).toBeCloseTo(1, 12);
    // check: worked by hand: all 9 pixels of the corner square touch its edge or the frame's except (1,1).
    expect(edge).toBeCloseTo(8 / 3, 12);
  });
});
