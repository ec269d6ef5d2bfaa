import type { Mask } from '../domain/frame.ts';
import { morphologyBits } from './morphologyBits.ts';
import { morphologyInput } from './morphologyInput.ts';
import type { ElementShape } from './elementShape.ts';

export interface DilateOptions {
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
 * Binary dilation: a pixel is set if any pixel under the structuring element centred on it is set
 * (any non-zero byte counts as set; the output is 0/1). Both element shapes are symmetric, so
 * this is also the Minkowski sum of the mask and the element.
 *
 * Border: pixels outside the image count as unset, so nothing grows in from the border. This is
 * opencv's default for `dilate` (BORDER_CONSTANT with `morphologyDefaultBorderValue()`, i.e. −∞,
 * neutral for a maximum).
 *
 * Method: as {@link erode}, with the roles of set and unset swapped: a row dilation then a column
 * dilation for the square (separability, Serra 1982), the union of the row and the column
 * dilations of the input for the cross; the passes run on the mask packed 32 pixels to a word
 * ({@link morphologyBits}: ORs of shifted rows and of 2r+1 rows).
 *
 * Memory: besides `out` (allocated when not given), the bit planes live in `scratch` (allocated
 * when not given, or for masks narrower than 12 pixels).
 *
 * Example, radius 1, cross:
 *
 *     . . . .        . # . .
 *     . # . .   →    # # # .
 *     . . . .        . # . .
 */
export function dilate(mask: Mask, options: DilateOptions = {}): Mask {
  const { radius = 1, shape = 'square', out, scratch } = options;

  const result = morphologyInput(mask, { radius, shape, out, scratch }, 1);
  return morphologyBits(mask, { steps: ['dilate'], radius, shape, out: result, scratch });
}
