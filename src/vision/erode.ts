import type { Mask } from '../domain/frame.ts';
import { morphologyBits } from './morphologyBits.ts';
import { morphologyInput } from './morphologyInput.ts';
import type { ElementShape } from './elementShape.ts';

export interface ErodeOptions {
  /** Half-size of the structuring element in pixels, integer ≥ 0 (inclusive); 1 → 3×3; 0 copies the mask. Default 1. */
  radius?: number;
  /** Structuring element shape, 'square' or 'cross'; default 'square'. */
  shape?: ElementShape;
  /** Mask to write into and return, same size as the input and not sharing memory with it; default: a new one. */
  out?: Mask;
  /** Work buffer for the bit planes, reusable across calls, length ≥ width × height (inclusive), not sharing memory with input or out; default: a new one. */
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
 * the intersection of the row and the column erosions of the input. The passes run on the mask
 * packed 32 pixels to a word ({@link morphologyBits}: a row erosion is the AND of the row shifted
 * by −r..r, a column erosion the AND of 2r+1 rows), so the cost is two byte passes plus
 * O(r · width · height / 32) word operations.
 *
 * Memory: besides `out` (allocated when not given), the bit planes live in `scratch` (allocated
 * when not given, or for masks narrower than 12 pixels).
 *
 * Example, radius 1, square:
 *
 *     # # # #        # # # #
 *     # # # #   →    . . # #
 *     . # # #        . . # #
 */
export function erode(mask: Mask, options: ErodeOptions = {}): Mask {
  const { radius = 1, shape = 'square', out, scratch } = options;

  const result = morphologyInput(mask, { radius, shape, out, scratch }, 1);
  return morphologyBits(mask, { steps: ['erode'], radius, shape, out: result, scratch });
}
