import { outputMask, type Mask } from '../domain/frame.ts';
import { outputBitMask, packMask, unpackMask, type BitMask } from './bitMask.ts';
import type { ElementShape } from './elementShape.ts';

/** One step of a morphological sequence. */
export const MorphologyStep = {
  /** Erosion, the outside of the image counting as set. */
  Erode: 'erode',
  /** Dilation, the outside of the image counting as unset. */
  Dilate: 'dilate',
} as const;
export type MorphologyStep = (typeof MorphologyStep)[keyof typeof MorphologyStep];

export interface MorphologyBitsOptions {
  /** The steps, applied in order with the same element; e.g. ['erode', 'dilate'] is an opening. Default: none (a 0/1 copy). */
  steps?: readonly MorphologyStep[];
  /** Half-size of the structuring element in pixels, integer ≥ 0 (inclusive); 1 → 3×3. Default 1. */
  radius?: number;
  /** Structuring element shape, 'square' or 'cross'; default 'square'. */
  shape?: ElementShape;
  /** Mask to write into and return, same size as the input and not sharing memory with it; default: a new one. */
  out?: Mask;
  /**
   * Work bytes for the three bit planes, not sharing memory with input or out: used when it holds
   * 3 × height × ⌈width / 32⌉ 32-bit words from its first 4-byte-aligned byte (width × height
   * bytes at a 4-byte-aligned offset are enough from a width of 12 pixels), else a buffer is
   * allocated. Default: allocated.
   */
  scratch?: Uint8Array;
}

/**
 * Binary erosions and dilations on a bitmapped mask: 32 pixels per 32-bit word, so that a row
 * shift is two word shifts and a row AND (OR) one word operation (bitmapped morphology as in
 * R. van den Boomgaard & R. van Balen, "Methods for fast morphological image transforms using
 * bitmapped binary images", CVGIP: Graphical Models and Image Processing 54(3), 1992). The mask
 * is packed once, every step runs on the bit planes, and the result is unpacked once, so a whole
 * opening or closing costs two byte passes over the image.
 *
 * Semantics are those of {@link erode} and {@link dilate} step by step: the square element is a
 * row segment then a column segment of 2r+1 pixels (separability, Serra 1982), the cross the
 * combination (AND for erosion, OR for dilation) of the row and column results of the step's
 * input; outside the image counts as set for an erosion and unset for a dilation, opencv's
 * default border. Any non-zero input byte is set; the output is 0/1.
 *
 * Layout: pixel x of a row is bit x mod 32 of word ⌊x / 32⌋ (least significant bit leftmost);
 * the bits past the row end in its last word hold the outside value of the current step.
 *
 * Arguments are trusted: {@link erode}, {@link dilate}, {@link openMask} and {@link closeMask}
 * validate them and call this.
 *
 * Example: steps ['erode', 'dilate'], radius 1 (an opening) removes a lone pixel and keeps a
 * 3×3 block.
 */
export function morphologyBits(mask: Mask, options: MorphologyBitsOptions = {}): Mask {
  const { steps = [], radius = 1, shape = 'square', out, scratch } = options;
  const { width, height, data } = mask;
  const result = outputMask(width, height, out);
  const words = (width + 31) >>> 5;
  const planeLength = height * words;
  const planes = planesOf(scratch, planeLength);
  packMask(mask, { width, height, words, data: planes[0] });
  unpackMask({ width, height, words, data: applySteps(planes, width, height, words, steps, radius, shape) }, result);
  return result;
}

export interface MorphologyBitMaskOptions {
  /** The steps, applied in order with the same element; default: none (a copy). */
  steps?: readonly MorphologyStep[];
  /** Half-size of the structuring element in pixels, integer ≥ 0 (inclusive); 1 → 3×3. Default 1. */
  radius?: number;
  /** Structuring element shape, 'square' or 'cross'; default 'square'. */
  shape?: ElementShape;
  /** Bit mask to write into and return, same size as the input; may be the input itself. Default: a new one. */
  out?: BitMask;
  /** Work words, at least 3 × height × ⌈width / 32⌉ (inclusive), not sharing memory with input or out; default: allocated. */
  scratch?: Int32Array;
}

/**
 * The erosions and dilations of {@link morphologyBits} on a mask that is already packed
 * ({@link BitMask}): no byte pass at all, so a chain of openings and closings between a
 * threshold that writes bits and a labelling that reads them costs a few word operations per 32
 * pixels. Same semantics, border and element as morphologyBits; the input's padding bits are
 * ignored, and the result's are unspecified.
 *
 * Example: steps ['dilate', 'erode'], radius 2 (a closing) fills a one-pixel gap in a bar.
 */
export function morphologyBitMask(mask: BitMask, options: MorphologyBitMaskOptions = {}): BitMask {
  const { steps = [], radius = 1, shape = 'square', out, scratch } = options;
  const { width, height, words } = mask;
  if (!(Number.isInteger(radius) && radius >= 0)) throw new RangeError(`radius: expected a whole number ≥ 0, got ${String(radius)}`);
  const result = outputBitMask(width, height, out);
  const planeLength = height * words;
  const work = scratch !== undefined && scratch.length >= 3 * planeLength ? scratch : new Int32Array(3 * planeLength);
  const planes: [Int32Array, Int32Array, Int32Array] = [
    work.subarray(0, planeLength),
    work.subarray(planeLength, 2 * planeLength),
    work.subarray(2 * planeLength, 3 * planeLength),
  ];
  planes[0].set(mask.data);
  result.data.set(applySteps(planes, width, height, words, steps, radius, shape));
  return result;
}

/** Runs the steps on planes[0] (changed), with the other two planes as work; returns the plane that holds the result. */
function applySteps(
  planes: [Int32Array, Int32Array, Int32Array],
  width: number,
  height: number,
  words: number,
  steps: readonly MorphologyStep[],
  radius: number,
  shape: ElementShape,
): Int32Array {
  const planeLength = height * words;
  let [current, rows, next] = planes;
  for (const step of steps) {
    const outside = step === 'erode' ? -1 : 0;
    setPadding(current, width, height, words, outside);
    shiftRows(current, rows, words, height, radius, outside);
    if (shape === 'square') {
      combineColumns(rows, next, words, height, radius, outside);
    } else {
      combineColumns(current, next, words, height, radius, outside);
      if (outside === -1) for (let i = 0; i < planeLength; i++) next[i] &= rows[i];
      else for (let i = 0; i < planeLength; i++) next[i] |= rows[i];
    }
    const done = current;
    current = next;
    next = done;
  }
  return current;
}

/** Three bit planes of `length` words, taken from `scratch` when it is long enough. */
function planesOf(scratch: Uint8Array | undefined, length: number): [Int32Array, Int32Array, Int32Array] {
  let buffer: ArrayBufferLike;
  let offset: number;
  const aligned = scratch === undefined ? 0 : (scratch.byteOffset + 3) & ~3;
  if (scratch !== undefined && aligned + 12 * length <= scratch.byteOffset + scratch.byteLength) {
    buffer = scratch.buffer;
    offset = aligned;
  } else {
    buffer = new ArrayBuffer(12 * length);
    offset = 0;
  }
  return [
    new Int32Array(buffer, offset, length),
    new Int32Array(buffer, offset + 4 * length, length),
    new Int32Array(buffer, offset + 8 * length, length),
  ];
}

/** Sets the bits past the row end in each row's last word to `outside`. */
function setPadding(plane: Int32Array, width: number, height: number, words: number, outside: number): void {
  const used = width & 31;
  if (used === 0 || words === 0) return;
  const keep = (1 << used) - 1;
  for (let w = words - 1; w < height * words; w += words) plane[w] = (plane[w] & keep) | (outside & ~keep);
}

/**
 * dst = src combined along each row over the offsets −r..r: AND for an erosion (outside = −1),
 * OR for a dilation (outside = 0), pixels past either end of the row being `outside`.
 */
function shiftRows(src: Int32Array, dst: Int32Array, words: number, height: number, r: number, outside: number): void {
  const and = outside === -1;
  // Offsets past the row's last word see only the outside, which changes nothing.
  const reach = Math.min(r, 32 * words);
  for (let row = 0; row < height * words; row += words) {
    for (let q = 0; q < words; q++) {
      let acc = src[row + q];
      for (let s = 1; s <= reach; s++) {
        const ws = s >>> 5;
        const bs = s & 31;
        // Pixel x + s: from words q + ws and q + ws + 1.
        const a = q + ws < words ? src[row + q + ws] : outside;
        const b = q + ws + 1 < words ? src[row + q + ws + 1] : outside;
        const right = bs === 0 ? a : (a >>> bs) | (b << (32 - bs));
        // Pixel x − s: from words q − ws and q − ws − 1.
        const c = q - ws >= 0 ? src[row + q - ws] : outside;
        const d = q - ws - 1 >= 0 ? src[row + q - ws - 1] : outside;
        const left = bs === 0 ? c : (c << bs) | (d >>> (32 - bs));
        acc = and ? acc & right & left : acc | right | left;
      }
      dst[row + q] = acc;
    }
  }
}

/**
 * dst = src combined along each column over the rows y − r..y + r (AND for an erosion, OR for a
 * dilation); rows outside the image are `outside` and so change nothing.
 */
function combineColumns(src: Int32Array, dst: Int32Array, words: number, height: number, r: number, outside: number): void {
  const and = outside === -1;
  for (let y = 0; y < height; y++) {
    const first = Math.max(0, y - r) * words;
    const last = Math.min(height - 1, y + r) * words;
    for (let q = 0, o = y * words; q < words; q++, o++) {
      let acc = outside;
      if (and) for (let t = first + q; t <= last + q; t += words) acc &= src[t];
      else for (let t = first + q; t <= last + q; t += words) acc |= src[t];
      dst[o] = acc;
    }
  }
}
