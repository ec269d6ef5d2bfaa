import type { Mask } from '../domain/frame.ts';
import type { ElementShape } from './elementShape.ts';
import { morphologyBits } from './morphologyBits.ts';
import { morphologyInput } from './morphologyInput.ts';

export interface OpenMaskOptions {
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
 * Morphological opening: {@link erode} then {@link dilate} with the same structuring element.
 * Removes set regions that the element does not fit inside (specks, thin lines) and keeps the
 * shape of those it fits (Serra 1982; opencv `morphologyEx` MORPH_OPEN).
 *
 * Border: as in the two steps, outside counts as set while eroding and as unset while dilating,
 * opencv's default, so the border neither erodes nor grows anything.
 *
 * Method: both steps run on the mask packed 32 pixels to a word ({@link morphologyBits}), packed
 * once and unpacked once.
 *
 * Scratch: holds the bit planes (three of height × ⌈width / 32⌉ words); a buffer is allocated
 * when none is given, or for masks narrower than 12 pixels.
 *
 * Example, radius 1, square: the isolated pixel goes, the 3×3 block stays.
 *
 *     # . . . .        . . . . .
 *     . . # # #   →    . . # # #
 *     . . # # #        . . # # #
 *     . . # # #        . . # # #
 */
export function openMask(mask: Mask, options: OpenMaskOptions = {}): Mask {
  const { radius = 1, shape = 'square', out, scratch } = options;

  const result = morphologyInput(mask, { radius, shape, out, scratch }, 2);
  return morphologyBits(mask, { steps: ['erode', 'dilate'], radius, shape, out: result, scratch });
}
