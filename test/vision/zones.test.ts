import { beforeAll, describe, expect, it } from 'vitest';
import { createMask } from '../../src/domain/frame.ts';
import { packMask } from '../../src/vision/bitMask.ts';
import { labelComponents, type Blob } from '../../src/vision/labelComponents.ts';
import { pointInPolygon } from '../../src/domain/pointInPolygon.ts';
import { prepareZones } from '../../src/vision/prepareZones.ts';
import { rasterizeZone } from '../../src/domain/rasterizeZone.ts';
import { peopleInBlob, tallyZones } from '../../src/vision/tallyZones.ts';
import type { NormalisedPoint } from '../../src/domain/zone.ts';
import { loadOpenCv } from '../helpers/opencv.ts';
import { mulberry } from '../helpers/random.ts';

/** A random star-shaped (hence simple) polygon around a centre. */
function starPolygon(rand: () => number): NormalisedPoint[] {
  const n = 3 + Math.floor(rand() * 9);
  const cx = 0.3 + rand() * 0.4;
  const cy = 0.3 + rand() * 0.4;
  const angles = Array.from({ length: n }, () => rand() * 2 * Math.PI).sort((a, b) => a - b);
  return angles.map((a) => {
    const r = 0.05 + rand() * 0.25;
    return [Math.min(1, Math.max(0, cx + r * Math.cos(a))), Math.min(1, Math.max(0, cy + r * Math.sin(a)))] as const;
  });
}

describe('pointInPolygon', () => {
  let cv: any;
  beforeAll(async () => {
    cv = await loadOpenCv();
  });

  it('agrees with opencv.js pointPolygonTest away from the boundary', () => {
    const rand = mulberry(17);
    let compared = 0;
    for (let trial = 0; trial < 200; trial++) {
      const polygon = starPolygon(rand);
      const contour = cv.matFromArray(polygon.length, 1, cv.CV_32FC2, polygon.flat());
      try {
        for (let q = 0; q < 20; q++) {
          const x = rand();
          const y = rand();
          // check: opencv.js pointPolygonTest (signed distance; > 0 inside, < 0 outside)
          const distance = cv.pointPolygonTest(contour, new cv.Point(x, y), true);
          if (Math.abs(distance) < 1e-4) continue;
          expect(pointInPolygon(x, y, polygon)).toBe(distance > 0);
          compared++;
        }
      } finally {
        contour.delete();
      }
    }
    expect(compared).toBeGreaterThan(3500);
  });

  it('assigns a point on a shared edge to exactly one of two neighbouring zones', () => {
    const left: NormalisedPoint[] = [[0, 0], [0.5, 0], [0.5, 1], [0, 1]];
    const right: NormalisedPoint[] = [[0.5, 0], [1, 0], [1, 1], [0.5, 1]];
    for (const y of [0.1, 0.5, 0.9]) {
      expect(Number(pointInPolygon(0.5, y, left)) + Number(pointInPolygon(0.5, y, right))).toBe(1);
    }
  });
});

describe('rasterizeZone', () => {
  it('sets exactly the pixels whose centres pointInPolygon puts inside', () => {
    const rand = mulberry(23);
    for (let trial = 0; trial < 50; trial++) {
      const polygon = starPolygon(rand);
      const width = 10 + Math.floor(rand() * 60);
      const height = 10 + Math.floor(rand() * 60);
      const mask = rasterizeZone(polygon, { width, height });
      for (let y = 0; y < height; y++) {
        for (let x = 0; x < width; x++) {
          expect(mask.data[y * width + x]).toBe(pointInPolygon((x + 0.5) / width, (y + 0.5) / height, polygon) ? 1 : 0);
        }
      }
    }
  });

  it('fills the left half of a 4×2 frame', () => {
    const mask = rasterizeZone([[0, 0], [0.5, 0], [0.5, 1], [0, 1]], { width: 4, height: 2 });
    expect(Array.from(mask.data)).toEqual([1, 1, 0, 0, 1, 1, 0, 0]);
  });
});

function blob(label: number, x0: number, y0: number, x1: number, y1: number, area: number): Blob {
  return { label, area, x0, y0, x1, y1, cx: (x0 + x1) / 2, cy: (y0 + y1) / 2, footX: (x0 + x1) / 2, footY: y1 };
}

describe('tallyZones', () => {
  it('rounds blob areas to people, halves up, at least one', () => {
    expect(peopleInBlob(10, 100)).toBe(1);
    expect(peopleInBlob(149, 100)).toBe(1);
    expect(peopleInBlob(150, 100)).toBe(2);
    expect(peopleInBlob(260, 100)).toBe(3);
    expect(peopleInBlob(260, 0)).toBe(1);
  });

  it('counts further people in a merged blob by the share of them that stays visible', () => {
    // check: worked by hand from the rule 1 + ⌊(a − 1) / s + ½⌋.
    expect(peopleInBlob(129, 100, 0.6)).toBe(1); // 1 + ⌊0.483 + ½⌋
    expect(peopleInBlob(131, 100, 0.6)).toBe(2); // 1 + ⌊0.517 + ½⌋
    expect(peopleInBlob(189, 100, 0.6)).toBe(2); // 1 + ⌊1.483 + ½⌋
    expect(peopleInBlob(191, 100, 0.6)).toBe(3); // 1 + ⌊1.517 + ½⌋
    expect(peopleInBlob(251, 100, 0.6)).toBe(4); // 1 + ⌊2.517 + ½⌋
    expect(peopleInBlob(40, 100, 0.6)).toBe(1); // a small blob is still one
    // Share 1 is plain rounding, halves up.
    expect(peopleInBlob(149, 100, 1)).toBe(1);
    expect(peopleInBlob(150, 100, 1)).toBe(2);
  });

  it('counts by foot point in rooms and by centroid on shelves, with fill', () => {
    const width = 100;
    const height = 100;
    const zones = prepareZones(
      [
        { id: 'left', kind: 'room', polygon: [[0, 0], [0.5, 0], [0.5, 1], [0, 1]], personArea: 0.01, minBlobArea: 0.002 },
        { id: 'right', kind: 'room', polygon: [[0.5, 0], [1, 0], [1, 1], [0.5, 1]], personArea: 0.01 },
        { id: 'shelf', kind: 'shelf', polygon: [[0, 0], [1, 0], [1, 0.2], [0, 0.2]] },
      ],
      { width, height },
    );
    const mask = createMask(width, height);
    for (let y = 0; y < 10; y++) for (let x = 0; x < 50; x++) mask.data[y * width + x] = 1; // a quarter of the shelf
    const blobs = [
      blob(1, 10, 30, 20, 70, 100), // one person, foot (15, 70): left
      blob(2, 40, 30, 70, 80, 250), // a pair of 2.5 areas → 3, foot (55, 80): right, though its box spans both
      blob(3, 30, 90, 31, 91, 4), // a speck below left's minimum (20 px)
      blob(4, 5, 2, 45, 8, 500), // an item on the shelf, centroid (25, 5); foot (25, 8) also in left
    ];
    const tally = tallyZones(blobs, mask, zones);
    expect(tally.zones.left).toEqual({ count: 1 + 5, fill: 500 / 5000, blobs: 2 });
    expect(tally.zones.right.count).toBe(3);
    expect(tally.zones.shelf).toEqual({ count: 1, fill: 0.25, blobs: 1 });
    // Each blob once, by the first zone claiming it: 1 + 5 (blob 4 as people in "left") + 3.
    expect(tally.total).toBe(9);
    // The same mask packed 32 pixels a word gives the same tally (fill by population count).
    expect(tallyZones(blobs, packMask(mask), zones)).toEqual(tally);
  });

  it('finds the same fill in a packed mask as in the byte mask, for any zone shape and width', () => {
    const rand = mulberry(29);
    for (const [width, height] of [[33, 20], [64, 7], [97, 41]] as const) {
      const zones = prepareZones(Array.from({ length: 5 }, (_, i) => ({ id: `z${i}`, kind: 'shelf' as const, polygon: starPolygon(rand) })), { width, height });
      const mask = createMask(width, height);
      for (let i = 0; i < mask.data.length; i++) mask.data[i] = rand() < 0.4 ? 1 : 0;
      const packed = packMask(mask);
      // Set padding bits must not count.
      if (width % 32 !== 0) for (let w = packed.words - 1; w < packed.data.length; w += packed.words) packed.data[w] |= ~((1 << (width % 32)) - 1);
      expect(tallyZones([], packed, zones)).toEqual(tallyZones([], mask, zones));
    }
  });
});

describe('tallyZones with perspective', () => {
  it('counts a near blob and a far blob of the same size differently', () => {
    const width = 100;
    const height = 100;
    // One person covers 1 % of the frame with feet at y 0.5 and 4 % at y 1.0; plain rounding of
    // the area in person areas (nobody hidden).
    const zones = prepareZones(
      [{ id: 'floor', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], perspective: [{ y: 0.5, area: 0.01 }, { y: 1, area: 0.04 }] }],
      { width, height },
      { visibleShare: 1 },
    );
    const mask = createMask(width, height);
    // Both blobs cover 400 pixels: four people far away (feet at row 49: about 1 % each), one person near (row 99: 4 %).
    const far = tallyZones([blob(1, 10, 30, 29, 49, 400)], mask, zones);
    const near = tallyZones([blob(1, 10, 80, 29, 99, 400)], mask, zones);
    expect(far.zones.floor.count).toBe(4);
    expect(near.zones.floor.count).toBe(1);
  });
});

describe('tallyZones on merged silhouettes', () => {
  // A 100×100 view whose person size follows a perspective line: references (y 0.5, 1 % of the
  // frame) and (y 1, 4 %) give √area = 0.2·y, so with feet on pixel row r (normalised
  // y = (r + ½) / 100) one person covers (0.2·y)² · 10⁴ pixels: 320.41 at row 89 (y 0.895),
  // 278.89 at row 83 (y 0.835), 98.01 at row 49 (y 0.495). Silhouettes are upright rectangles
  // about that size.
  const width = 100;
  const height = 100;
  const perspective = [{ y: 0.5, area: 0.01 }, { y: 1, area: 0.04 }];
  const zones = prepareZones([{ id: 'floor', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], perspective }], { width, height });
  const plain = prepareZones([{ id: 'floor', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], perspective }], { width, height }, { visibleShare: 1 });
  /** Columns x0..x1 and rows y0..y1 (inclusive) of a mask drawn with the given rectangles. */
  function draw(...rects: [number, number, number, number][]) {
    const mask = createMask(width, height);
    for (const [x0, y0, x1, y1] of rects) for (let y = y0; y <= y1; y++) for (let x = x0; x <= x1; x++) mask.data[y * width + x] = 1;
    return mask;
  }
  function count(mask: ReturnType<typeof createMask>, prepared = zones): { people: number; blobs: number; area: number } {
    const { blobs } = labelComponents(mask);
    const tally = tallyZones(blobs, mask, prepared);
    return { people: tally.zones.floor.count, blobs: blobs.length, area: blobs.reduce((s, b) => s + b.area, 0) };
  }

  it('counts one person as one, near and far', () => {
    // check: worked by hand. Near: 11 × 29 = 319 px at row 89, 319 / 320.41 = 0.996 → 1.
    expect(count(draw([20, 61, 30, 89]))).toEqual({ people: 1, blobs: 1, area: 319 });
    // Far: 5 × 20 = 100 px at row 49, 100 / 98.01 = 1.02 → 1.
    expect(count(draw([50, 30, 54, 49]))).toEqual({ people: 1, blobs: 1, area: 100 });
    // A person drawn 20 % larger than expected is still one: 11 × 35 = 385 px at row 89 → 1.20 → 1 + ⌊0.33 + ½⌋ = 1.
    expect(count(draw([20, 55, 30, 89])).people).toBe(1);
  });

  it('counts two people side by side whose silhouettes overlap as two', () => {
    // check: worked by hand. Two 11 × 29 silhouettes at row 89, columns 20–30 and 25–35: one blob
    // 16 × 29 = 464 px, 464 / 320.41 = 1.448 person areas. Plain rounding gives 1; the rule for
    // rooms 1 + ⌊0.448 / 0.6 + ½⌋ = 1 + ⌊1.247⌋ = 2.
    const pair = draw([20, 61, 30, 89], [25, 61, 35, 89]);
    expect(count(pair)).toEqual({ people: 2, blobs: 1, area: 464 });
    expect(count(pair, plain).people).toBe(1);
  });

  it('counts a person partly behind another as a second person', () => {
    // check: worked by hand. Near: 11 × 29 at row 89 (columns 30–40, rows 61–89, 319 px); behind
    // and to the right: 10 × 27 at row 83 (columns 34–43, rows 57–83, 270 px), of which rows
    // 61–83 × columns 34–40 (23 × 7 = 161 px) are hidden. One blob of 319 + 270 − 161 = 428 px
    // with its feet on row 89: 428 / 320.41 = 1.336 areas → 1 + ⌊0.336 / 0.6 + ½⌋ = 1 + ⌊1.06⌋ = 2
    // (plain rounding: 1).
    const pair = draw([30, 61, 40, 89], [34, 57, 43, 83]);
    expect(count(pair)).toEqual({ people: 2, blobs: 1, area: 428 });
    expect(count(pair, plain).people).toBe(1);
  });

  it('counts three far people walking abreast as three', () => {
    // check: worked by hand. Three 5 × 20 silhouettes at row 49, columns 10–14, 13–17, 16–20: one
    // blob 11 × 20 = 220 px, 220 / 98.01 = 2.245 areas → 1 + ⌊1.245 / 0.6 + ½⌋ = 1 + ⌊2.57⌋ = 3
    // (plain rounding: 2).
    const three = draw([10, 30, 14, 49], [13, 30, 17, 49], [16, 30, 20, 49]);
    expect(count(three)).toEqual({ people: 3, blobs: 1, area: 220 });
    expect(count(three, plain).people).toBe(2);
  });

  it('keeps plain rounding in a room with one person area for every row', () => {
    const flat = prepareZones([{ id: 'floor', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], personArea: 0.01 }], { width, height });
    expect(flat[0].visibleShare).toBe(1);
    // check: worked by hand. 140 px against people of 100 px: 1.4 → 1 (a seated person's zone
    // with someone larger walking through it; with a perspective line it would be 2).
    expect(count(draw([10, 10, 23, 19]), flat).people).toBe(1);
    expect(zones[0].visibleShare).toBe(0.6);
  });

  it('keeps plain rounding for items on a shelf', () => {
    const shelf = prepareZones([{ id: 'floor', kind: 'shelf', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], personArea: 0.01 }], { width, height });
    expect(shelf[0].visibleShare).toBe(1);
    // check: worked by hand. 140 px against items of 100 px: 1.4 → 1 (the room rule would give 2).
    expect(count(draw([10, 10, 23, 19]), shelf).people).toBe(1);
  });

  it('rejects a visible share outside (0, 1], naming it', () => {
    expect(() => prepareZones([], { width, height }, { visibleShare: 0 })).toThrow(/visibleShare/);
    expect(() => prepareZones([], { width, height }, { visibleShare: 1.5 })).toThrow(/visibleShare/);
  });
});
