import { beforeAll, describe, expect, it } from 'vitest';
import { createMask } from '../../src/domain/frame.ts';
import { packMask } from '../../src/vision/bitMask.ts';
import type { Blob } from '../../src/vision/labelComponents.ts';
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
    // One person covers 1 % of the frame with feet at y 0.5 and 4 % at y 1.0.
    const zones = prepareZones(
      [{ id: 'floor', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], perspective: [{ y: 0.5, area: 0.01 }, { y: 1, area: 0.04 }] }],
      { width, height },
    );
    const mask = createMask(width, height);
    // Both blobs cover 400 pixels: four people far away (feet at row 49: about 1 % each), one person near (row 99: 4 %).
    const far = tallyZones([blob(1, 10, 30, 29, 49, 400)], mask, zones);
    const near = tallyZones([blob(1, 10, 80, 29, 99, 400)], mask, zones);
    expect(far.zones.floor.count).toBe(4);
    expect(near.zones.floor.count).toBe(1);
  });
});
