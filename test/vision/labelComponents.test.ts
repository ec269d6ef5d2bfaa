import fc from 'fast-check';
import { beforeAll, describe, expect, it } from 'vitest';
import type { Mask } from '../../src/domain/frame.ts';
import { labelComponents, type Components } from '../../src/vision/labelComponents.ts';
import { loadOpenCv } from '../helpers/opencv.ts';
import { maskOf } from '../helpers/masks.ts';


/** The labels as rows of digits ('.' for background), for readable expectations. */
function labelRows(c: Components, width: number): string[] {
  const rows: string[] = [];
  for (let i = 0; i < c.labels.length; i += width) {
    rows.push(Array.from(c.labels.subarray(i, i + width), (l) => (l === 0 ? '.' : String(l))).join(''));
  }
  return rows;
}

describe('labelComponents: hand-typed masks with known answers', () => {
  // Expected values worked out by hand from the definitions; the opencv.js comparisons below
  // check the same semantics against an outside implementation.
  it('finds nothing in an empty mask', () => {
    const c = labelComponents(maskOf(['...', '...', '...']));
    expect(c.count).toBe(0);
    expect(c.blobs).toEqual([]);
    expect(Array.from(c.labels)).toEqual(new Array(9).fill(0));
  });

  it('handles a 0×0 mask', () => {
    const c = labelComponents({ width: 0, height: 0, data: new Uint8Array(0) });
    expect(c.count).toBe(0);
    expect(c.labels.length).toBe(0);
  });

  it('finds one blob covering a full mask, with box, centroid and foot', () => {
    for (const connectivity of [4, 8] as const) {
      const c = labelComponents(maskOf(['####', '####', '####']), { connectivity });
      expect(c.count).toBe(1);
      expect(c.blobs).toEqual([{ label: 1, area: 12, x0: 0, y0: 0, x1: 3, y1: 2, cx: 1.5, cy: 1, footX: 1.5, footY: 2 }]);
      expect(Array.from(c.labels)).toEqual(new Array(12).fill(1));
    }
  });

  it('joins two diagonal pixels with 8-connectivity and separates them with 4', () => {
    const mask = maskOf(['#.', '.#']);
    const eight = labelComponents(mask, { connectivity: 8 });
    expect(eight.count).toBe(1);
    expect(eight.blobs[0]).toMatchObject({ area: 2, x0: 0, y0: 0, x1: 1, y1: 1, cx: 0.5, cy: 0.5 });
    const four = labelComponents(mask, { connectivity: 4 });
    expect(four.count).toBe(2);
    expect(labelRows(four, 2)).toEqual(['1.', '.2']);
    expect(four.blobs.map((b) => [b.label, b.area, b.cx, b.cy])).toEqual([
      [1, 1, 0, 0],
      [2, 1, 1, 1],
    ]);
  });

  it('joins an anti-diagonal (up-right neighbour) with 8-connectivity only', () => {
    const mask = maskOf(['..#', '.#.', '#..']);
    expect(labelComponents(mask, { connectivity: 8 }).count).toBe(1);
    expect(labelComponents(mask, { connectivity: 4 }).count).toBe(3);
  });

  it('merges the two arms of a U into one label, and numbers later blobs consecutively', () => {
    // Provisional labels: left arm 1, right arm 2, last column 3; the bottom row merges 1 and 2,
    // so the last column must come out as 2.
    const mask = maskOf(['#.#..#', '#.#..#', '###...']);
    for (const connectivity of [4, 8] as const) {
      const c = labelComponents(mask, { connectivity });
      expect(c.count).toBe(2);
      expect(labelRows(c, 6)).toEqual(['1.1..2', '1.1..2', '111...']);
      expect(c.blobs[0]).toEqual({ label: 1, area: 7, x0: 0, y0: 0, x1: 2, y1: 2, cx: 1, cy: 8 / 7, footX: 1, footY: 2 });
      expect(c.blobs[1]).toEqual({ label: 2, area: 2, x0: 5, y0: 0, x1: 5, y1: 1, cx: 5, cy: 0.5, footX: 5, footY: 1 });
    }
  });

  it('merges through the 8-connectivity corner cases (up-right with up-left, up-right with left)', () => {
    // (1,1) sees a=(0,0) and c=(2,0): one union; (3,3) sees d=(2,3) and c=(4,2).
    const mask = maskOf(['#.#..', '.#...', '....#', '..##.']);
    const c = labelComponents(mask, { connectivity: 8 });
    expect(labelRows(c, 5)).toEqual(['1.1..', '.1...', '....2', '..22.']);
    expect(labelComponents(mask, { connectivity: 4 }).count).toBe(5);
  });

  it('resolves a chain of merges (a comb) into a single label', () => {
    const mask = maskOf(['#.#.#.#', '#.#.#.#', '#######']);
    for (const connectivity of [4, 8] as const) {
      const c = labelComponents(mask, { connectivity });
      expect(c.count).toBe(1);
      expect(c.blobs[0].area).toBe(15);
    }
  });

  it('numbers blobs in raster order of their first pixel', () => {
    // The blob whose first pixel is at (3,0) comes before the one starting at (0,1), even though
    // the latter reaches further left.
    const mask = maskOf(['...#', '#..#', '#...', '####']);
    const c = labelComponents(mask, { connectivity: 4 });
    expect(labelRows(c, 4)).toEqual(['...1', '2..1', '2...', '2222']);
    expect(c.blobs.map((b) => b.label)).toEqual([1, 2]);
  });

  it('labels one-pixel-wide images (1×N and N×1)', () => {
    const row = labelComponents(maskOf(['##.#..###']));
    expect(row.count).toBe(3);
    expect(row.blobs.map((b) => [b.x0, b.x1, b.area, b.cx, b.footX, b.footY])).toEqual([
      [0, 1, 2, 0.5, 0.5, 0],
      [3, 3, 1, 3, 3, 0],
      [6, 8, 3, 7, 7, 0],
    ]);
    const column = labelComponents(maskOf(['#', '#', '.', '#']));
    expect(column.count).toBe(2);
    expect(column.blobs.map((b) => [b.y0, b.y1, b.area, b.cy, b.footY])).toEqual([
      [0, 1, 2, 0.5, 1],
      [3, 3, 1, 3, 3],
    ]);
    expect(labelComponents(maskOf(['#'])).blobs).toEqual([
      { label: 1, area: 1, x0: 0, y0: 0, x1: 0, y1: 0, cx: 0, cy: 0, footX: 0, footY: 0 },
    ]);
  });

  it('puts the foot at the bottom centre of the box, not under the centroid', () => {
    // An L: box x 0..2, y 0..2; centroid pulled left; foot at ((0+2)/2, 2).
    const c = labelComponents(maskOf(['#..', '#..', '###']));
    expect(c.blobs[0]).toEqual({ label: 1, area: 5, x0: 0, y0: 0, x1: 2, y1: 2, cx: 3 / 5, cy: 7 / 5, footX: 1, footY: 2 });
  });

  it('gives the documented example', () => {
    const mask = maskOf(['#..', '.##']);
    const eight = labelComponents(mask);
    expect(eight.blobs).toEqual([{ label: 1, area: 3, x0: 0, y0: 0, x1: 2, y1: 1, cx: 1, cy: 2 / 3, footX: 1, footY: 1 }]);
    const four = labelComponents(mask, { connectivity: 4 });
    expect(labelRows(four, 3)).toEqual(['1..', '.22']);
  });

  it('treats any non-zero byte as set', () => {
    const mask: Mask = { width: 3, height: 1, data: Uint8Array.of(255, 7, 0) };
    expect(labelComponents(mask).blobs[0]).toMatchObject({ area: 2, x0: 0, x1: 1 });
  });
});

describe('labelComponents: buffers and validation', () => {
  it('writes into out and reuses a dirty scratch without changing results or the input', () => {
    const masks = [maskOf(['#.#.', '.#.#', '#..#']), maskOf(['####', '....', '#.##']), maskOf(['....', '....', '....'])];
    const out = new Int32Array(12).fill(99);
    const scratch = new Int32Array(7).fill(-5);
    for (const mask of masks) {
      const before = Uint8Array.from(mask.data);
      const fresh = labelComponents(mask);
      const reused = labelComponents(mask, { out, scratch });
      expect(reused.labels).toBe(out);
      expect(Array.from(reused.labels)).toEqual(Array.from(fresh.labels));
      expect(reused.blobs).toEqual(fresh.blobs);
      expect(Array.from(mask.data)).toEqual(Array.from(before));
    }
  });

  it('rejects bad options and masks, naming the field', () => {
    const mask = maskOf(['#.', '.#']);
    expect(() => labelComponents(mask, { connectivity: 6 as 4 })).toThrow(/connectivity/);
    expect(() => labelComponents(mask, { out: new Int32Array(3) })).toThrow(/options\.out/);
    expect(() => labelComponents(mask, { scratch: new Int32Array(2) })).toThrow(/options\.scratch/);
    expect(() => labelComponents({ width: 2, height: 2, data: new Uint8Array(3) })).toThrow(/mask\.data/);
    expect(() => labelComponents({ width: -2, height: -2, data: new Uint8Array(4) })).toThrow(/width and height/);
  });
});

describe('labelComponents against opencv.js', () => {
  let cv: any;
  beforeAll(async () => {
    cv = await loadOpenCv();
  });

  /**
   * Labels `mask` with both and checks: same number of components; label images equal up to a
   * renaming of labels; same (area, left, top, width, height) and centroid per renamed pair; our
   * labels in raster order of first pixel.
   */
  function checkAgainstOpenCv(mask: Mask, connectivity: 4 | 8): void {
    const { width, height } = mask;
    const ours = labelComponents(mask, { connectivity });

    // check: opencv.js connectedComponentsWithStats
    const src = cv.matFromArray(height, width, cv.CV_8UC1, mask.data);
    const labelsMat = new cv.Mat();
    const statsMat = new cv.Mat();
    const centroidsMat = new cv.Mat();
    let n: number;
    let theirLabels: Int32Array;
    let stats: Int32Array;
    let centroids: Float64Array;
    let cols: number; // stats columns per label (CC_STAT_MAX)
    try {
      n = cv.connectedComponentsWithStats(src, labelsMat, statsMat, centroidsMat, connectivity, cv.CV_32S);
      // Copy out of the WebAssembly heap at once: a later heap growth would detach the views.
      theirLabels = Int32Array.from(labelsMat.data32S);
      stats = Int32Array.from(statsMat.data32S);
      cols = statsMat.cols;
      centroids = Float64Array.from(centroidsMat.data64F);
    } finally {
      src.delete();
      labelsMat.delete();
      statsMat.delete();
      centroidsMat.delete();
    }
    const [LEFT, TOP, WIDTH, HEIGHT, AREA] = [cv.CC_STAT_LEFT, cv.CC_STAT_TOP, cv.CC_STAT_WIDTH, cv.CC_STAT_HEIGHT, cv.CC_STAT_AREA];

    // Same number of components (opencv counts the background as label 0).
    expect(ours.count).toBe(n - 1);

    // Same multiset of (area, left, top, width, height).
    const byTuple = (a: number[], b: number[]) => a.reduce((d, v, k) => d || v - b[k], 0);
    const ourTuples = ours.blobs.map((b) => [b.area, b.x0, b.y0, b.x1 - b.x0 + 1, b.y1 - b.y0 + 1]).sort(byTuple);
    const theirTuples: number[][] = [];
    for (let l = 1; l < n; l++) {
      const s = l * cols;
      theirTuples.push([stats[s + AREA], stats[s + LEFT], stats[s + TOP], stats[s + WIDTH], stats[s + HEIGHT]]);
    }
    theirTuples.sort(byTuple);
    expect(ourTuples).toEqual(theirTuples);

    // Label images equal up to a bijective renaming, found pixel by pixel.
    const toTheirs = new Int32Array(ours.count + 1).fill(-1);
    const toOurs = new Int32Array(n).fill(-1);
    for (let i = 0; i < width * height; i++) {
      const a = ours.labels[i];
      const b = theirLabels[i];
      if ((a === 0) !== (b === 0)) throw new Error(`pixel ${i}: our label ${a}, opencv label ${b}`);
      if (a === 0) continue;
      if (toTheirs[a] === -1 && toOurs[b] === -1) {
        toTheirs[a] = b;
        toOurs[b] = a;
      } else if (toTheirs[a] !== b || toOurs[b] !== a) {
        throw new Error(`pixel ${i}: our label ${a} maps to opencv ${toTheirs[a]}, opencv ${b} maps to ours ${toOurs[b]}`);
      }
    }

    // Per blob: same stats, centroid within 1e-9. (Plain comparisons: thousands of blobs per mask.)
    for (const blob of ours.blobs) {
      const t = toTheirs[blob.label];
      const s = t * cols;
      const mine = [blob.area, blob.x0, blob.y0, blob.x1 - blob.x0 + 1, blob.y1 - blob.y0 + 1];
      const theirs = [stats[s + AREA], stats[s + LEFT], stats[s + TOP], stats[s + WIDTH], stats[s + HEIGHT]];
      if (mine.some((v, k) => v !== theirs[k])) {
        throw new Error(`blob ${blob.label}: (area, left, top, width, height) ours ${mine}, opencv ${theirs}`);
      }
      const dx = Math.abs(blob.cx - centroids[2 * t]);
      const dy = Math.abs(blob.cy - centroids[2 * t + 1]);
      if (!(dx <= 1e-9 && dy <= 1e-9)) {
        throw new Error(`blob ${blob.label}: centroid ours (${blob.cx}, ${blob.cy}), opencv (${centroids[2 * t]}, ${centroids[2 * t + 1]})`);
      }
      if (blob.footX !== (blob.x0 + blob.x1) / 2 || blob.footY !== blob.y1) {
        throw new Error(`blob ${blob.label}: foot (${blob.footX}, ${blob.footY}) is not the bottom centre of its box`);
      }
    }

    // Our own numbering: labels first appear in raster order 1, 2, 3, ...
    let nextExpected = 1;
    for (let i = 0; i < width * height; i++) {
      const a = ours.labels[i];
      if (a >= nextExpected) {
        if (a !== nextExpected) throw new Error(`pixel ${i}: label ${a} appears before label ${nextExpected}`);
        nextExpected++;
      }
    }
    expect(nextExpected - 1).toBe(ours.count);
    ours.blobs.forEach((b, k) => {
      if (b.label !== k + 1) throw new Error(`blobs[${k}].label is ${b.label}`);
    });
  }

  /** A side length: often 1 (to cover 1×N and N×1), else 1..48. */
  const side = fc.oneof(fc.constant(1), fc.integer({ min: 1, max: 48 }));
  /**
   * Random masks of random size; each pixel set with a random density 0..100 %. Set pixels are 1,
   * or, in some masks, assorted non-zero bytes (any non-zero byte counts as set).
   */
  const randomMask = fc
    .record({ width: side, height: side, density: fc.integer({ min: 0, max: 100 }), bytes: fc.boolean() })
    .chain(({ width, height, density, bytes }) =>
      fc
        .array(fc.integer({ min: 0, max: 99 }), { minLength: width * height, maxLength: width * height })
        .map((draws): Mask => ({
          width,
          height,
          data: Uint8Array.from(draws, (d) => (d >= density ? 0 : bytes ? 1 + ((d * 97) % 255) : 1)),
        })),
    );
  const unit = fc.double({ min: 0, max: 1, noNaN: true });
  /** Random masks made of a few filled rectangles: big blobs that touch, nest and merge. */
  const rectangleMask = fc
    .record({
      width: fc.integer({ min: 1, max: 64 }),
      height: fc.integer({ min: 1, max: 64 }),
      // Each rectangle: two corners in 0..1 of width and height, and whether it sets or clears.
      rects: fc.array(fc.tuple(unit, unit, unit, unit, fc.boolean()), { maxLength: 12 }),
    })
    .map(({ width, height, rects }): Mask => {
      const data = new Uint8Array(width * height);
      for (const [u0, v0, u1, v1, set] of rects) {
        const xa = Math.floor(Math.min(u0, u1) * width);
        const xb = Math.floor(Math.max(u0, u1) * width);
        const ya = Math.floor(Math.min(v0, v1) * height);
        const yb = Math.floor(Math.max(v0, v1) * height);
        for (let y = ya; y < Math.min(yb + 1, height); y++) {
          data.fill(set ? 1 : 0, y * width + xa, y * width + Math.min(xb + 1, width));
        }
      }
      return { width, height, data };
    });

  for (const connectivity of [4, 8] as const) {
    it(`matches connectedComponentsWithStats on random masks, ${connectivity}-connectivity`, () => {
      fc.assert(
        fc.property(randomMask, (mask) => checkAgainstOpenCv(mask, connectivity)),
        { numRuns: 300 },
      );
    });

    it(`matches connectedComponentsWithStats on masks of rectangles, ${connectivity}-connectivity`, () => {
      fc.assert(
        fc.property(rectangleMask, (mask) => checkAgainstOpenCv(mask, connectivity)),
        { numRuns: 200 },
      );
    });

    it(`matches connectedComponentsWithStats on full-size 320×240 masks, ${connectivity}-connectivity`, () => {
      // Densities around the site-percolation thresholds give long, winding, many-merge blobs.
      fc.assert(
        fc.property(fc.integer({ min: 0, max: 2 ** 31 - 1 }), fc.integer({ min: 30, max: 70 }), (seed, percent) => {
          let s = (seed | 1) >>> 0; // xorshift32 must not start at 0
          const data = new Uint8Array(320 * 240);
          for (let i = 0; i < data.length; i++) {
            // xorshift32, a small deterministic generator for test data
            s ^= s << 13;
            s >>>= 0;
            s ^= s >>> 17;
            s ^= s << 5;
            s >>>= 0;
            data[i] = s % 100 < percent ? 1 : 0;
          }
          checkAgainstOpenCv({ width: 320, height: 240, data }, connectivity);
        }),
        { numRuns: 10 },
      );
    });
  }
});
