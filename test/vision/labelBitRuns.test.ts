import { beforeAll, describe, expect, it } from 'vitest';
import type { Mask } from '../../src/domain/frame.ts';
import { packMask, type BitMask } from '../../src/vision/bitMask.ts';
import { createLabelBitRunsScratch, labelBitRuns, type LabelBitRunsScratch } from '../../src/vision/labelBitRuns.ts';
import { labelComponents, type Blob } from '../../src/vision/labelComponents.ts';
import { loadOpenCv } from '../helpers/opencv.ts';
import { mulberry } from '../helpers/random.ts';
import { maskOf } from '../helpers/masks.ts';


/** Each pixel set with probability `density`. */
function randomMask(width: number, height: number, density: number, rand: () => number): Mask {
  const data = new Uint8Array(width * height);
  for (let i = 0; i < data.length; i++) data[i] = rand() < density ? 1 : 0;
  return { width, height, data };
}

/**
 * Rows of alternating set and unset stretches with random lengths 1..2·mean: long runs that cross
 * word boundaries and overlap the rows above in many ways.
 */
function stretchMask(width: number, height: number, meanSet: number, meanUnset: number, rand: () => number): Mask {
  const data = new Uint8Array(width * height);
  for (let y = 0; y < height; y++) {
    let set = rand() < 0.5;
    for (let x = 0; x < width; ) {
      const len = 1 + Math.floor(rand() * 2 * (set ? meanSet : meanUnset));
      const end = Math.min(width, x + len);
      if (set) data.fill(1, y * width + x, y * width + end);
      x = end;
      set = !set;
    }
  }
  return { width, height, data };
}

/**
 * A square spiral of 1-pixel walls with 1-pixel gaps, drawn as one 4-connected path from the top
 * left corner inwards: its arms are met in raster order as many separate runs that only join far
 * down the image, so labelling it needs long chains of merges. Returns the mask and its pixel count.
 */
function spiral(size: number): { mask: Mask; pixels: number } {
  const data = new Uint8Array(size * size);
  const at = (x: number, y: number) => x >= 0 && y >= 0 && x < size && y < size && data[y * size + x] === 1;
  const inside = (x: number, y: number) => x >= 0 && y >= 0 && x < size && y < size;
  const dirs = [
    [1, 0],
    [0, 1],
    [-1, 0],
    [0, -1],
  ];
  let x = 0;
  let y = 0;
  let d = 0;
  let pixels = 1;
  data[0] = 1;
  for (let turns = 0; turns < 2; ) {
    const [dx, dy] = dirs[d];
    // Step on while the next cell is free and the one after it is not part of the wall already.
    if (inside(x + dx, y + dy) && !at(x + dx, y + dy) && !at(x + 2 * dx, y + 2 * dy)) {
      x += dx;
      y += dy;
      data[y * size + x] = 1;
      pixels++;
      turns = 0;
    } else {
      d = (d + 1) & 3;
      turns++;
    }
  }
  return { mask: { width: size, height: size, data }, pixels };
}

/** A copy of `bits` with every padding bit (past the row end in each row's last word) set to 1. */
function withPaddingSet(bits: BitMask): BitMask {
  const data = Int32Array.from(bits.data);
  const tail = bits.width & 31;
  if (tail !== 0) {
    const padding = ~((1 << tail) - 1);
    for (let y = 0; y < bits.height; y++) data[y * bits.words + bits.words - 1] |= padding;
  }
  return { ...bits, data };
}

/**
 * Checks labelBitRuns on the packed `mask` against labelComponents on the byte mask itself:
 * the same count and exactly the same blobs (numbering, box, area, centroid and foot, bit for bit).
 */
function expectSameAsLabelComponents(mask: Mask, connectivity: 4 | 8, bits: BitMask = packMask(mask), scratch?: LabelBitRunsScratch): void {
  const reference = labelComponents(mask, { connectivity });
  const ours = labelBitRuns(bits, { connectivity, scratch });
  const where = `${mask.width}×${mask.height}, ${connectivity}-connectivity`;
  expect(ours.count, where).toBe(reference.count);
  expect(ours.blobs, where).toEqual(reference.blobs);
}

describe('labelBitRuns: hand-typed masks with known answers', () => {
  // Expected values worked out by hand from the definitions in labelComponents.
  it('gives the documented example', () => {
    const bits = packMask(maskOf(['#..', '.##']));
    expect(labelBitRuns(bits)).toEqual({
      count: 1,
      blobs: [{ label: 1, area: 3, x0: 0, y0: 0, x1: 2, y1: 1, cx: 1, cy: 2 / 3, footX: 1, footY: 1 }],
    });
    expect(labelBitRuns(bits, { connectivity: 4 }).blobs.map((b) => [b.label, b.area, b.x0, b.y0])).toEqual([
      [1, 1, 0, 0],
      [2, 2, 1, 1],
    ]);
  });

  it('joins runs by their corners with 8-connectivity only (the run diagram of the doc comment)', () => {
    const bits = packMask(maskOf(['##.#', '..#.']));
    const eight = labelBitRuns(bits, { connectivity: 8 });
    expect(eight.blobs).toEqual([{ label: 1, area: 4, x0: 0, y0: 0, x1: 3, y1: 1, cx: 6 / 4, cy: 1 / 4, footX: 1.5, footY: 1 }]);
    const four = labelBitRuns(bits, { connectivity: 4 });
    expect(four.blobs.map((b) => [b.label, b.area, b.x0, b.x1, b.y0, b.cx])).toEqual([
      [1, 2, 0, 1, 0, 0.5],
      [2, 1, 3, 3, 0, 3],
      [3, 1, 2, 2, 1, 2],
    ]);
  });

  it('separates diagonal-only contacts with 4-connectivity and joins them with 8', () => {
    // A diagonal line and an anti-diagonal one, across a word boundary (columns 30..33).
    const rows = ['#...', '.#..', '..#.', '...#'].map((r) => '.'.repeat(30) + r + '.'.repeat(6));
    const anti = [...rows].reverse();
    for (const mask of [maskOf(rows), maskOf(anti)]) {
      expect(labelBitRuns(packMask(mask), { connectivity: 8 }).count).toBe(1);
      expect(labelBitRuns(packMask(mask), { connectivity: 4 }).count).toBe(4);
      expectSameAsLabelComponents(mask, 8);
      expectSameAsLabelComponents(mask, 4);
    }
    // Runs that only touch at a corner, end of one against start of the next row's.
    const step = maskOf(['###.....', '...###..', '......##']);
    expect(labelBitRuns(packMask(step), { connectivity: 8 }).count).toBe(1);
    expect(labelBitRuns(packMask(step), { connectivity: 4 }).count).toBe(3);
  });

  it('merges the arms of a U, and numbers later blobs consecutively', () => {
    // Runs: left arm 0, right arm 1, last column 2 in row 0; the bottom row merges 0 and 1.
    const mask = maskOf(['#.#..#', '#.#..#', '###...']);
    for (const connectivity of [4, 8] as const) {
      const c = labelBitRuns(packMask(mask), { connectivity });
      expect(c.count).toBe(2);
      expect(c.blobs[0]).toEqual({ label: 1, area: 7, x0: 0, y0: 0, x1: 2, y1: 2, cx: 1, cy: 8 / 7, footX: 1, footY: 2 });
      expect(c.blobs[1]).toEqual({ label: 2, area: 2, x0: 5, y0: 0, x1: 5, y1: 1, cx: 5, cy: 0.5, footX: 5, footY: 1 });
    }
  });

  it('numbers blobs in raster order of their first pixel, not of their leftmost one', () => {
    // The blob starting at (3,0) is label 1 although the other reaches column 0 first.
    const c = labelBitRuns(packMask(maskOf(['...#', '#..#', '#...', '####'])), { connectivity: 4 });
    expect(c.blobs.map((b) => [b.label, b.x0, b.y0, b.area])).toEqual([
      [1, 3, 0, 2],
      [2, 0, 1, 6],
    ]);
  });

  it('resolves combs, a W standing in a U, a ring and a checkerboard', () => {
    const masks = [
      maskOf(['#.#.#.#', '#.#.#.#', '#######']), // comb: four arms joined by the last row
      maskOf(['#...#.#...#', '#.#.#.#.#.#', '#.#######.#', '#....#....#', '###########']), // a W standing in a U
      maskOf(['#####', '#...#', '#.#.#', '#...#', '#####']), // ring with a dot inside
      maskOf(['#.#.#.#.#', '.#.#.#.#.', '#.#.#.#.#']), // checkerboard: one blob with 8, fourteen with 4
    ];
    for (const mask of masks) for (const connectivity of [4, 8] as const) expectSameAsLabelComponents(mask, connectivity);
    expect(labelBitRuns(packMask(masks[0])).blobs).toEqual([
      { label: 1, area: 15, x0: 0, y0: 0, x1: 6, y1: 2, cx: 3, cy: 18 / 15, footX: 3, footY: 2 },
    ]);
    expect(labelBitRuns(packMask(masks[1])).count).toBe(1);
    expect(labelBitRuns(packMask(masks[2])).blobs.map((b) => [b.label, b.area])).toEqual([
      [1, 16],
      [2, 1],
    ]);
    expect(labelBitRuns(packMask(masks[3]), { connectivity: 8 }).count).toBe(1);
    expect(labelBitRuns(packMask(masks[3]), { connectivity: 4 }).count).toBe(14);
  });

  it('labels spirals as one blob in either connectivity', () => {
    for (const size of [5, 12, 33, 64, 65, 101]) {
      const { mask, pixels } = spiral(size);
      for (const connectivity of [4, 8] as const) {
        const c = labelBitRuns(packMask(mask), { connectivity });
        expect(c.count).toBe(1);
        expect(c.blobs[0]).toMatchObject({ label: 1, area: pixels, x0: 0, y0: 0, x1: size - 1, y1: size - 1 });
        expectSameAsLabelComponents(mask, connectivity);
      }
    }
  });

  it('finds nothing in empty masks, including 0×0, 0×N and N×0', () => {
    for (const [w, h] of [
      [0, 0],
      [0, 5],
      [5, 0],
      [1, 1],
      [32, 3],
      [65, 4],
    ]) {
      expect(labelBitRuns(packMask({ width: w, height: h, data: new Uint8Array(w * h) }))).toEqual({ count: 0, blobs: [] });
    }
  });

  it('finds one blob covering a full mask, whatever the width', () => {
    for (const width of [1, 31, 32, 33, 64, 65, 320]) {
      const height = 3;
      const mask: Mask = { width, height, data: new Uint8Array(width * height).fill(1) };
      for (const connectivity of [4, 8] as const) {
        const c = labelBitRuns(packMask(mask), { connectivity });
        expect(c.blobs).toEqual([
          { label: 1, area: width * height, x0: 0, y0: 0, x1: width - 1, y1: 2, cx: (width - 1) / 2, cy: 1, footX: (width - 1) / 2, footY: 2 },
        ]);
        // Every word all ones, padding included.
        const allOnes: BitMask = { ...packMask(mask), data: new Int32Array(height * Math.ceil(width / 32)).fill(-1) };
        expect(labelBitRuns(allOnes, { connectivity })).toEqual(c);
      }
    }
  });

  it('finds runs that cross word boundaries or fill a word exactly', () => {
    const width = 97;
    const row = (ranges: [number, number][]) => {
      const chars = new Array(width).fill('.');
      for (const [a, b] of ranges) for (let x = a; x <= b; x++) chars[x] = '#';
      return chars.join('');
    };
    const mask = maskOf([
      row([[30, 34]]), // across the first boundary
      row([]),
      row([[0, 31], [64, 95]]), // exactly words 0 and 2
      row([]),
      row([[31, 32], [63, 64], [96, 96]]), // two pixels either side of a boundary; the last pixel
      row([]),
      row([[0, 96]]), // a whole row through three words
    ]);
    const c = labelBitRuns(packMask(mask), { connectivity: 4 });
    expect(c.blobs.map((b) => [b.x0, b.x1, b.y0, b.area])).toEqual([
      [30, 34, 0, 5],
      [0, 31, 2, 32],
      [64, 95, 2, 32],
      [31, 32, 4, 2],
      [63, 64, 4, 2],
      [96, 96, 4, 1],
      [0, 96, 6, 97],
    ]);
    expectSameAsLabelComponents(mask, 4);
    expectSameAsLabelComponents(mask, 8);
  });
});

describe('labelBitRuns equals labelComponents', () => {
  const widths = [1, 2, 31, 32, 33, 63, 64, 65, 97, 320];
  const heights = [1, 2, 3, 17, 40];
  const densities = [0, 0.02, 0.2, 0.45, 0.6, 0.8, 0.97, 1];

  for (const connectivity of [4, 8] as const) {
    it(`on random masks of many sizes and densities, ${connectivity}-connectivity`, () => {
      const rand = mulberry(1000 + connectivity);
      for (const width of widths) {
        for (const height of heights) {
          for (const density of densities) expectSameAsLabelComponents(randomMask(width, height, density, rand), connectivity);
        }
      }
    });

    it(`on masks of long random stretches, ${connectivity}-connectivity`, () => {
      const rand = mulberry(2000 + connectivity);
      for (const width of widths) {
        for (const [meanSet, meanUnset] of [
          [3, 3],
          [20, 4],
          [40, 40],
          [4, 20],
        ]) {
          expectSameAsLabelComponents(stretchMask(width, 30, meanSet, meanUnset, rand), connectivity);
        }
      }
    });

    it(`on full-size 320×240 masks around the percolation densities, ${connectivity}-connectivity`, () => {
      const rand = mulberry(3000 + connectivity);
      for (const density of [0.3, 0.45, 0.55, 0.6, 0.7]) expectSameAsLabelComponents(randomMask(320, 240, density, rand), connectivity);
    });

    it(`ignores set padding bits, ${connectivity}-connectivity`, () => {
      const rand = mulberry(4000 + connectivity);
      for (const width of [1, 5, 31, 33, 63, 65, 97, 319]) {
        for (const density of [0, 0.3, 0.6, 1]) {
          const mask = randomMask(width, 9, density, rand);
          const padded = withPaddingSet(packMask(mask));
          // The padding really is set: a reader that did not mask it off would see extra pixels.
          expect(padded.data[padded.words - 1] >>> (width & 31)).toBe(-1 >>> (width & 31));
          expectSameAsLabelComponents(mask, connectivity, padded);
        }
      }
    });
  }

  it('does not change the mask', () => {
    const bits = withPaddingSet(packMask(randomMask(65, 20, 0.5, mulberry(5))));
    const before = Int32Array.from(bits.data);
    labelBitRuns(bits);
    labelBitRuns(bits, { connectivity: 4, scratch: createLabelBitRunsScratch(2, 2) });
    expect(bits.data).toEqual(before);
  });
});

describe('labelBitRuns: scratch', () => {
  it('gives the same results with one scratch reused across masks of growing run counts as with fresh buffers', () => {
    const rand = mulberry(77);
    const scratch = createLabelBitRunsScratch(1, 1); // far too small: every array must grow
    const lengths = { runs: scratch.runStart.length, labels: scratch.area.length, rows: scratch.rowStart.length };
    const masks: Mask[] = [];
    for (const [w, h, d] of [
      [8, 4, 0.3],
      [33, 10, 0.5],
      [65, 30, 0.5],
      [20, 5, 0.9], // smaller again: must not be confused by the leftovers of the bigger one
      [320, 60, 0.5],
      [320, 240, 0.45],
      [16, 300, 0.5], // more rows than before
    ] as const) {
      masks.push(randomMask(w, h, d, rand));
    }
    // The worst case for runs: alternating columns, ⌈width / 2⌉ runs per row, one blob each with 4.
    masks.push({ width: 321, height: 240, data: Uint8Array.from({ length: 321 * 240 }, (_, i) => ((i % 321) % 2 === 0 ? 1 : 0)) });
    for (const mask of masks) {
      for (const connectivity of [4, 8] as const) {
        const fresh = labelBitRuns(packMask(mask), { connectivity });
        expect(labelBitRuns(packMask(mask), { connectivity, scratch })).toEqual(fresh);
        expectSameAsLabelComponents(mask, connectivity, packMask(mask), scratch);
      }
    }
    expect(scratch.runStart.length).toBeGreaterThanOrEqual(161 * 240);
    expect(scratch.runStart.length).toBeGreaterThan(lengths.runs);
    expect(scratch.area.length).toBeGreaterThan(lengths.labels);
    expect(scratch.rowStart.length).toBeGreaterThan(lengths.rows);
  });

  it('does not replace the arrays of a scratch made for the mask size, even in the worst case, and tolerates dirty contents', () => {
    const width = 65;
    const height = 40;
    const scratch = createLabelBitRunsScratch(width, height);
    const arrays = Object.values(scratch);
    for (const a of arrays) a.fill(-7);
    const checker = Uint8Array.from({ length: width * height }, (_, i) => ((i % width) + Math.floor(i / width)) % 2);
    const stripes = Uint8Array.from({ length: width * height }, (_, i) => ((i % width) % 2 === 0 ? 1 : 0));
    const rand = mulberry(9);
    for (const data of [checker, stripes, randomMask(width, height, 0.5, rand).data]) {
      const mask: Mask = { width, height, data };
      for (const connectivity of [4, 8] as const) expectSameAsLabelComponents(mask, connectivity, packMask(mask), scratch);
    }
    // 4-connected checkerboard: 65 × 40 / 2 set pixels, no two edge-adjacent, each its own blob.
    expect(labelBitRuns(packMask({ width, height, data: checker }), { connectivity: 4, scratch }).count).toBe(1300);
    expect(Object.values(scratch).every((a, k) => a === arrays[k])).toBe(true);
  });
});

describe('labelBitRuns: validation', () => {
  it('rejects bad masks and options, naming the field', () => {
    const bits = packMask(maskOf(['#.', '.#']));
    expect(() => labelBitRuns(bits, { connectivity: 6 as 4 })).toThrow(/options\.connectivity/);
    expect(() => labelBitRuns({ ...bits, words: 2 })).toThrow(/mask\.words/);
    expect(() => labelBitRuns({ ...bits, data: new Int32Array(3) })).toThrow(/mask\.data/);
    expect(() => labelBitRuns({ width: -1, height: 2, words: 0, data: new Int32Array(0) })).toThrow(/width and height/);
    const scratch = createLabelBitRunsScratch(2, 2);
    expect(() => labelBitRuns(bits, { scratch: { ...scratch, parent: new Int32Array(1) } })).toThrow(/options\.scratch\.parent/);
    expect(() => labelBitRuns(bits, { scratch: { ...scratch, sumX: new Int32Array(scratch.area.length) as never } })).toThrow(
      /options\.scratch\.sumX/,
    );
    expect(() => createLabelBitRunsScratch(1.5, 2)).toThrow(/width and height/);
  });
});

describe('labelBitRuns against opencv.js', () => {
  let cv: any;
  beforeAll(async () => {
    cv = await loadOpenCv();
  });

  /** (area, left, top, width, height, cx, cy) per blob, sorted. */
  type Row = [number, number, number, number, number, number, number];
  const byRow = (a: Row, b: Row) => a.reduce((d, v, k) => d || v - b[k], 0);

  function ourRows(blobs: Blob[]): Row[] {
    return blobs.map((b): Row => [b.area, b.x0, b.y0, b.x1 - b.x0 + 1, b.y1 - b.y0 + 1, b.cx, b.cy]).sort(byRow);
  }

  function openCvRows(mask: Mask, connectivity: 4 | 8): Row[] {
    // check: opencv.js connectedComponentsWithStats
    const src = cv.matFromArray(mask.height, mask.width, cv.CV_8UC1, mask.data);
    const labels = new cv.Mat();
    const statsMat = new cv.Mat();
    const centroidsMat = new cv.Mat();
    try {
      const n: number = cv.connectedComponentsWithStats(src, labels, statsMat, centroidsMat, connectivity, cv.CV_32S);
      // Copy out of the WebAssembly heap at once: a later heap growth would detach the views.
      const stats = Int32Array.from(statsMat.data32S);
      const centroids = Float64Array.from(centroidsMat.data64F);
      const cols: number = statsMat.cols;
      const rows: Row[] = [];
      for (let l = 1; l < n; l++) {
        const s = l * cols;
        rows.push([
          stats[s + cv.CC_STAT_AREA],
          stats[s + cv.CC_STAT_LEFT],
          stats[s + cv.CC_STAT_TOP],
          stats[s + cv.CC_STAT_WIDTH],
          stats[s + cv.CC_STAT_HEIGHT],
          centroids[2 * l],
          centroids[2 * l + 1],
        ]);
      }
      return rows.sort(byRow);
    } finally {
      src.delete();
      labels.delete();
      statsMat.delete();
      centroidsMat.delete();
    }
  }

  for (const connectivity of [4, 8] as const) {
    it(`matches connectedComponentsWithStats in count, areas, boxes and centroids, ${connectivity}-connectivity`, () => {
      const rand = mulberry(6000 + connectivity);
      const masks: Mask[] = [
        randomMask(320, 240, 0.45, rand),
        randomMask(320, 240, 0.6, rand),
        randomMask(65, 33, 0.3, rand),
        stretchMask(97, 50, 12, 6, rand),
        spiral(41).mask,
      ];
      for (const mask of masks) {
        // Padding bits set, to be sure they play no part in the comparison either.
        const ours = labelBitRuns(withPaddingSet(packMask(mask)), { connectivity });
        const theirs = openCvRows(mask, connectivity);
        expect(ours.count).toBe(theirs.length);
        const mine = ourRows(ours.blobs);
        for (let i = 0; i < mine.length; i++) {
          const [a, b] = [mine[i], theirs[i]];
          if (a.slice(0, 5).some((v, k) => v !== b[k])) throw new Error(`blob ${i}: (area, left, top, width, height) ours ${a}, opencv ${b}`);
          if (!(Math.abs(a[5] - b[5]) <= 1e-9 && Math.abs(a[6] - b[6]) <= 1e-9)) {
            throw new Error(`blob ${i}: centroid ours (${a[5]}, ${a[6]}), opencv (${b[5]}, ${b[6]})`);
          }
        }
      }
    });
  }
});
