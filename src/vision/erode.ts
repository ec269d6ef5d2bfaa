import { outputMask, type Mask } from '../frames/frame.ts';

/** Shape of the structuring element, centred on the pixel, of half-size `radius`. */
export const ElementShape = {
  /** (2r+1)×(2r+1) square: opencv MORPH_RECT. */
  Square: 'square',
  /** Row r and column r of that square, a plus sign: opencv MORPH_CROSS. */
  Cross: 'cross',
} as const;
export type ElementShape = (typeof ElementShape)[keyof typeof ElementShape];

export interface ErodeOptions {
  /** Half-size of the structuring element in pixels, integer ≥ 0 (inclusive); 1 → 3×3; 0 copies the mask. Default 1. */
  radius?: number;
  /** Structuring element shape, 'square' or 'cross'; default 'square'. */
  shape?: ElementShape;
  /** Mask to write into and return, same size as the input and not sharing memory with it; default: a new one. */
  out?: Mask;
  /** Work buffer for the row pass, reusable across calls, length ≥ width × height (inclusive), not sharing memory with input or out; default: a new one. */
  scratch?: Uint8Array;
}

/**
 * Binary erosion: a pixel stays set only if every pixel under the structuring element centred on
 * it is set (any non-zero byte counts as set; the output is 0/1).
 *
 * Border: pixels outside the image count as set, so the border never erodes anything by itself.
 * This is opencv's default for `erode` (BORDER_CONSTANT with `morphologyDefaultBorderValue()`,
 * i.e. +∞, neutral for a minimum).
 *
 * Method: the square is the Minkowski sum of a horizontal and a vertical segment of length 2r+1,
 * so erosion by it is a row erosion followed by a column erosion (separability; Serra, "Image
 * Analysis and Mathematical Morphology", 1982); erosion by the cross, the union of the two segments, is
 * the intersection of the row and the column erosions of the input. Each 1-D erosion keeps a
 * running count of unset pixels in the sliding window, the two-bin case of the running histogram
 * of Huang, Yang & Tang ("A fast two-dimensional median filtering algorithm", IEEE Trans. ASSP
 * 27(1), 1979), so the cost is O(width × height) whatever the radius.
 *
 * Memory: besides `out` and `scratch` (allocated when not given), each call allocates only one
 * row of `width` 32-bit column counters.
 *
 * Example, radius 1, square:
 *
 *     # # # #        # # # #
 *     # # # #   →    . . # #
 *     . # # #        . . # #
 */
export function erode(mask: Mask, options: ErodeOptions = {}): Mask {
  const { radius = 1, shape = 'square', out, scratch } = options;

  const { width, height, data } = mask;
  if (!Number.isInteger(width) || width < 0 || !Number.isInteger(height) || height < 0) {
    throw new RangeError(`mask width and height must be non-negative integers, got ${width}×${height}`);
  }
  const n = width * height;
  if (!(data instanceof Uint8Array) || data.length !== n) {
    throw new RangeError(`mask.data must be a Uint8Array of length ${n} (${width}×${height}), got length ${data?.length}`);
  }
  if (!Number.isInteger(radius) || radius < 0) {
    throw new RangeError(`options.radius must be an integer ≥ 0 (pixels), got ${String(radius)}`);
  }
  if (shape !== 'square' && shape !== 'cross') {
    throw new RangeError(`options.shape must be 'square' or 'cross', got ${String(shape)}`);
  }
  const result = outputMask(width, height, out);
  if (overlaps(result.data, data)) throw new RangeError('options.out must not share memory with the input mask');
  if (scratch !== undefined) {
    if (!(scratch instanceof Uint8Array) || scratch.length < n) {
      throw new RangeError(`options.scratch must be a Uint8Array of length at least ${n}, got length ${scratch?.length}`);
    }
    if (overlaps(scratch, data) || overlaps(scratch, result.data)) {
      throw new RangeError('options.scratch must not share memory with the input mask or options.out');
    }
  }
  const rows = scratch ?? new Uint8Array(n);

  erodeRows(data, rows, width, height, radius);
  if (shape === 'square') erodeColumns(rows, result.data, width, height, radius, undefined);
  else erodeColumns(data, result.data, width, height, radius, rows);
  return result;
}

/*
 * Inner loops are branch-free on the pixel values: for a byte v, `-v >>> 31` is 1 when v is set
 * and 0 when it is not, `1 ^ (-v >>> 31)` the opposite; for a count c ≥ 0, `(c - 1) >>> 31` is 1
 * exactly when c is 0.
 */

/** dst = src eroded along each row by a segment of half-length r; outside the row counts as set. */
function erodeRows(src: Uint8Array, dst: Uint8Array, width: number, height: number, r: number): void {
  for (let base = 0, n = width * height; base < n; base += width) {
    const end = base + width;
    // Unset pixels in the window [x - r, x + r] of the current x, starting at x = 0.
    let unset = 0;
    for (let k = base, leadEnd = Math.min(base + r + 1, end); k < leadEnd; k++) unset += 1 ^ (-src[k] >>> 31);
    let x = base;
    // Head: the window still starts before the row, nothing leaves it.
    for (const headEnd = Math.min(base + r, end); x < headEnd; x++) {
      dst[x] = (unset - 1) >>> 31;
      if (x + r + 1 < end) unset += 1 ^ (-src[x + r + 1] >>> 31);
    }
    // Middle: x + r + 1 enters, x - r leaves.
    for (const middleEnd = Math.max(end - r - 1, x); x < middleEnd; x++) {
      dst[x] = (unset - 1) >>> 31;
      unset += (1 ^ (-src[x + r + 1] >>> 31)) - (1 ^ (-src[x - r] >>> 31));
    }
    // Tail: the window reaches past the row end, nothing enters.
    for (; x < end; x++) {
      dst[x] = (unset - 1) >>> 31;
      unset -= 1 ^ (-src[x - r] >>> 31);
    }
  }
}

/**
 * dst = src eroded along each column by a segment of half-length r, then ANDed with `and` when
 * given; outside the column counts as set. Runs row by row, keeping one counter per column.
 */
function erodeColumns(
  src: Uint8Array,
  dst: Uint8Array,
  width: number,
  height: number,
  r: number,
  and: Uint8Array | undefined,
): void {
  // Unset pixels per column in the rows [y - r, y + r] of the current y, starting at y = 0.
  const unset = new Int32Array(width);
  for (let k = 0, leadEnd = Math.min(r + 1, height); k < leadEnd; k++) {
    for (let x = 0, b = k * width; x < width; x++) unset[x] += 1 ^ (-src[b + x] >>> 31);
  }
  for (let y = 0; y < height; y++) {
    const b = y * width;
    if (and === undefined) {
      for (let x = 0; x < width; x++) dst[b + x] = (unset[x] - 1) >>> 31;
    } else {
      for (let x = 0; x < width; x++) dst[b + x] = ((unset[x] - 1) >>> 31) & and[b + x];
    }
    const enter = y + r + 1 < height ? (y + r + 1) * width : -1;
    const leave = y - r >= 0 ? (y - r) * width : -1;
    if (enter >= 0 && leave >= 0) {
      for (let x = 0; x < width; x++) unset[x] += (1 ^ (-src[enter + x] >>> 31)) - (1 ^ (-src[leave + x] >>> 31));
    } else if (enter >= 0) {
      for (let x = 0; x < width; x++) unset[x] += 1 ^ (-src[enter + x] >>> 31);
    } else if (leave >= 0) {
      for (let x = 0; x < width; x++) unset[x] -= 1 ^ (-src[leave + x] >>> 31);
    }
  }
}

/** True when two byte arrays share at least one byte of memory. */
function overlaps(a: Uint8Array, b: Uint8Array): boolean {
  if (a.buffer !== b.buffer) return false;
  return a.byteOffset < b.byteOffset + b.byteLength && b.byteOffset < a.byteOffset + a.byteLength;
}
