import type { Mask } from '../domain/frame.ts';
import type { ElementShape } from './elementShape.ts';
import { morphologyBits } from './morphologyBits.ts';
import { morphologyInput } from './morphologyInput.ts';

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

  const result = morphologyInput(mask, { radius, shape, out, scratch }, 2);
  return morphologyBits(mask, { steps: ['dilate', 'erode'], radius, shape, out: result, scratch });
}
