import fc from 'fast-check';
import { beforeAll, describe, expect, it } from 'vitest';
import type { Mask } from '../../src/domain/frame.ts';
import { closeMask } from '../../src/vision/closeMask.ts';
import { dilate } from '../../src/vision/dilate.ts';
import { erode } from '../../src/vision/erode.ts';
import type { ElementShape } from '../../src/vision/elementShape.ts';
import { openMask } from '../../src/vision/openMask.ts';
import { loadOpenCv } from '../helpers/opencv.ts';
import { maskOf } from '../helpers/masks.ts';


/** The mask as rows of '#' and '.'; any value other than 0 or 1 shows as '?'. */
function rowsOf(mask: Mask): string[] {
  const rows: string[] = [];
  for (let i = 0; i < mask.data.length; i += mask.width) {
    rows.push(Array.from(mask.data.subarray(i, i + mask.width), (v) => (v === 0 ? '.' : v === 1 ? '#' : '?')).join(''));
  }
  return rows;
}

const operations = { erode, dilate, openMask, closeMask } as const;
type OperationName = keyof typeof operations;

describe('morphology: hand-typed masks with known answers', () => {
  // Expected values worked out by hand from the definitions; the opencv.js comparisons below
  // check the same semantics against an outside implementation.
  it('erodes as documented, with the outside counting as set', () => {
    expect(rowsOf(erode(maskOf(['####', '####', '.###'])))).toEqual(['####', '..##', '..##']);
  });

  it('keeps a full mask full under erosion and an empty mask empty under dilation, any radius', () => {
    for (const radius of [1, 2, 7]) {
      for (const shape of ['square', 'cross'] as const) {
        expect(rowsOf(erode(maskOf(['###', '###']), { radius, shape }))).toEqual(['###', '###']);
        expect(rowsOf(dilate(maskOf(['...', '...']), { radius, shape }))).toEqual(['...', '...']);
      }
    }
  });

  it('dilates a single pixel into the structuring element, clipped at the border', () => {
    const dot = maskOf(['.....', '.#...', '.....', '.....']);
    expect(rowsOf(dilate(dot))).toEqual(['###..', '###..', '###..', '.....']);
    expect(rowsOf(dilate(dot, { shape: 'cross' }))).toEqual(['.#...', '###..', '.#...', '.....']);
    expect(rowsOf(dilate(dot, { radius: 2 }))).toEqual(['####.', '####.', '####.', '####.']);
    expect(rowsOf(dilate(dot, { radius: 2, shape: 'cross' }))).toEqual(['.#...', '####.', '.#...', '.#...']);
  });

  it('erodes away everything the element does not fit inside', () => {
    const plus = maskOf(['.....', '..#..', '.###.', '..#..', '.....']);
    expect(rowsOf(erode(plus, { shape: 'cross' }))).toEqual(['.....', '.....', '..#..', '.....', '.....']);
    expect(rowsOf(erode(plus))).toEqual(['.....', '.....', '.....', '.....', '.....']);
  });

  it('copies the mask for radius 0, writing 0/1', () => {
    const mask: Mask = { width: 3, height: 1, data: Uint8Array.of(255, 0, 3) };
    for (const op of Object.values(operations)) {
      expect(Array.from(op(mask, { radius: 0 }).data)).toEqual([1, 0, 1]);
    }
  });

  it('opens away a speck and keeps a block it fits inside', () => {
    expect(rowsOf(openMask(maskOf(['#....', '..###', '..###', '..###'])))).toEqual(['.....', '..###', '..###', '..###']);
  });

  it('closes a one-pixel hole', () => {
    expect(rowsOf(closeMask(maskOf(['#####', '##.##', '#####'])))).toEqual(['#####', '#####', '#####']);
  });

  it('works on one-pixel-wide images', () => {
    expect(rowsOf(erode(maskOf(['##.###'])))).toEqual(['#...##']);
    expect(rowsOf(dilate(maskOf(['#.....#'])))).toEqual(['##...##']);
    expect(rowsOf(dilate(maskOf(['.', '#', '.', '.'])))).toEqual(['#', '#', '#', '.']);
    expect(rowsOf(erode(maskOf(['#', '#', '.', '#'])))).toEqual(['#', '.', '.', '.']);
  });
});

describe('morphology: buffers and validation', () => {
  it('writes into out, reuses a dirty scratch, and leaves the input alone', () => {
    const masks = [maskOf(['#.##.', '.###.', '##..#']), maskOf(['.....', '..#..', '.....']), maskOf(['#####', '#####', '#####'])];
    const n = 15;
    for (const [name, op] of Object.entries(operations)) {
      const scratchSize = name === 'openMask' || name === 'closeMask' ? 2 * n : n;
      const out: Mask = { width: 5, height: 3, data: new Uint8Array(n).fill(7) };
      const scratch = new Uint8Array(scratchSize).fill(9);
      for (const mask of masks) {
        const before = Uint8Array.from(mask.data);
        const fresh = op(mask, { radius: 1 });
        const reused = op(mask, { radius: 1, out, scratch });
        expect(reused).toBe(out);
        expect(Array.from(reused.data)).toEqual(Array.from(fresh.data));
        expect(Array.from(mask.data)).toEqual(Array.from(before));
      }
    }
  });

  it('rejects bad options, naming the field', () => {
    const mask = maskOf(['#.#', '.#.']);
    for (const [name, op] of Object.entries(operations)) {
      expect(() => op(mask, { radius: -1 }), name).toThrow(/radius/);
      expect(() => op(mask, { radius: 1.5 }), name).toThrow(/radius/);
      expect(() => op(mask, { shape: 'disc' as ElementShape }), name).toThrow(/shape/);
      expect(() => op(mask, { out: { width: 2, height: 3, data: new Uint8Array(6) } }), name).toThrow(/out/);
      expect(() => op(mask, { out: mask }), name).toThrow(/out/);
      expect(() => op(mask, { scratch: new Uint8Array(3) }), name).toThrow(/scratch/);
      expect(() => op(mask, { scratch: mask.data }), name).toThrow(/scratch/);
      expect(() => op({ width: 2, height: 2, data: new Uint8Array(3) }), name).toThrow(/mask\.data/);
    }
  });
});

describe('morphology against opencv.js', () => {
  let cv: any;
  beforeAll(async () => {
    cv = await loadOpenCv();
  });

  /**
   * Runs `name` on `mask` here and in opencv.js with the same element and opencv's default
   * anchor, iterations and border (arguments left out), and expects identical masks.
   */
  function checkAgainstOpenCv(name: OperationName, mask: Mask, radius: number, shape: ElementShape): void {
    const ours = operations[name](mask, { radius, shape });
    const { width, height } = mask;

    // check: opencv.js erode / dilate / morphologyEx (MORPH_OPEN, MORPH_CLOSE) with
    // getStructuringElement(MORPH_RECT or MORPH_CROSS, (2r+1)×(2r+1)) and default border
    const src = cv.matFromArray(height, width, cv.CV_8UC1, mask.data);
    const dst = new cv.Mat();
    const size = new cv.Size(2 * radius + 1, 2 * radius + 1);
    const kernel = cv.getStructuringElement(shape === 'square' ? cv.MORPH_RECT : cv.MORPH_CROSS, size);
    let theirs: Uint8Array;
    try {
      if (name === 'erode') cv.erode(src, dst, kernel);
      else if (name === 'dilate') cv.dilate(src, dst, kernel);
      else cv.morphologyEx(src, dst, name === 'openMask' ? cv.MORPH_OPEN : cv.MORPH_CLOSE, kernel);
      if (dst.rows !== height || dst.cols !== width) throw new Error(`opencv returned ${dst.cols}×${dst.rows}`);
      // opencv keeps grey levels (min or max of the window): non-zero there means set here.
      theirs = Uint8Array.from(dst.data, (v: number) => (v === 0 ? 0 : 1));
    } finally {
      src.delete();
      dst.delete();
      kernel.delete();
    }
    for (let i = 0; i < width * height; i++) {
      if (ours.data[i] !== theirs[i]) {
        const x = i % width;
        const y = (i - x) / width;
        throw new Error(
          `${name} r=${radius} ${shape} on ${width}×${height}: pixel (${x}, ${y}) ours ${ours.data[i]}, opencv ${theirs[i]}\n` +
            `input:\n${rowsOf({ width, height, data: mask.data.map((v) => (v === 0 ? 0 : 1)) }).join('\n')}\nours:\n${rowsOf(ours).join('\n')}\nopencv:\n${rowsOf({ width, height, data: theirs }).join('\n')}`,
        );
      }
    }
  }

  /** A side length: often 1 (to cover 1×N and N×1), else 1..40. */
  const side = fc.oneof(fc.constant(1), fc.integer({ min: 1, max: 40 }));
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
  /** Radii 0..4 mostly, sometimes up to 25 (larger than many of the masks). */
  const radiusArb = fc.oneof(fc.integer({ min: 0, max: 4 }), fc.integer({ min: 5, max: 25 }));
  const shapeArb = fc.constantFrom<ElementShape>('square', 'cross');

  for (const name of Object.keys(operations) as OperationName[]) {
    it(`${name} matches opencv.js exactly on random masks, radii and shapes`, () => {
      fc.assert(
        fc.property(randomMask, radiusArb, shapeArb, (mask, radius, shape) => checkAgainstOpenCv(name, mask, radius, shape)),
        { numRuns: 300 },
      );
    });
  }

  it('matches opencv.js on full-size 320×240 masks for radii 1..3', () => {
    let s = 0x9e3779b9;
    const data = new Uint8Array(320 * 240);
    for (let i = 0; i < data.length; i++) {
      // xorshift32, a small deterministic generator for test data
      s ^= s << 13;
      s >>>= 0;
      s ^= s >>> 17;
      s ^= s << 5;
      s >>>= 0;
      data[i] = s % 100 < 55 ? 1 : 0;
    }
    const mask: Mask = { width: 320, height: 240, data };
    for (const name of Object.keys(operations) as OperationName[]) {
      for (const radius of [1, 2, 3]) {
        for (const shape of ['square', 'cross'] as const) checkAgainstOpenCv(name, mask, radius, shape);
      }
    }
  });
});
