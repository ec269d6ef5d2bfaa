import { outputMask, type Mask } from '../frames/frame.ts';
import type { ElementShape } from './erode.ts';
import { morphologyBits } from './morphologyBits.ts';

export interface CloseMaskOptions {
  /** Half-size of the structuring element in pixels, integer ≥ 0 (inclusive); 1 → 3×3; 0 copies the mask. Default 1. */
  radius?: number;
  /** Structuring element shape, 'square' or 'cross'; default 'square'. */
  shape?: ElementShape;
  /** Mask to write into and return, same size as the input and not sharing memory with it; default: a new one. */
  out?: Mask;
  /** Work buffer, reusable across calls, length ≥ 2 × width × height (inclusive), not sharing memory with input or out; default: a new one. */
  scratch?: Uint8Array;
}

/**
 * Morphological closing: {@link dilate} then {@link erode} with the same structuring element.
 * Fills holes and gaps the element does not fit inside and keeps the outline elsewhere
 * (Serra 1982; opencv `morphologyEx` MORPH_CLOSE).
 *
 * Border: as in the two steps, outside counts as unset while dilating and as set while eroding,
 * opencv's default, so the border neither grows nor erodes anything by itself.
 *
 * Method: both steps run on the mask packed 32 pixels to a word ({@link morphologyBits}), packed
 * once and unpacked once.
 *
 * Scratch: holds the bit planes (three of height × ⌈width / 32⌉ words); a buffer is allocated
 * when none is given, or for masks narrower than 12 pixels.
 *
 * Example, radius 1, square: the one-pixel hole is filled.
 *
 *     # # # # #        # # # # #
 *     # # . # #   →    # # # # #
 *     # # # # #        # # # # #
 */
export function closeMask(mask: Mask, options: CloseMaskOptions = {}): Mask {
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
    if (!(scratch instanceof Uint8Array) || scratch.length < 2 * n) {
      throw new RangeError(`options.scratch must be a Uint8Array of length at least ${2 * n} (2 × ${width}×${height}), got length ${scratch?.length}`);
    }
    if (overlaps(scratch, data) || overlaps(scratch, result.data)) {
      throw new RangeError('options.scratch must not share memory with the input mask or options.out');
    }
  }
  return morphologyBits(mask, { steps: ['dilate', 'erode'], radius, shape, out: result, scratch });
}

/** True when two byte arrays share at least one byte of memory. */
function overlaps(a: Uint8Array, b: Uint8Array): boolean {
  if (a.buffer !== b.buffer) return false;
  return a.byteOffset < b.byteOffset + b.byteLength && b.byteOffset < a.byteOffset + a.byteLength;
}
