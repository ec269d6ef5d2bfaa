/**
 * The colour frame of the optional colour mode (shadow suppression), beside the grey frame of
 * frame.ts that every other stage uses.
 *
 * A colour frame is row-major and interleaved: pixel (x, y) is `data[3 (y · width + x) + c]` for
 * channel c = 0 (red), 1 (green), 2 (blue), 8-bit sRGB-encoded values 0..255 as a camera or
 * decoder delivers them. x runs right and y down, as in GreyFrame, so a colour frame and the grey
 * frame decoded from the same picture line up pixel for pixel.
 *
 * Like grey frames, colour frames live only in memory: nothing writes one to disk, the database,
 * a log or the network.
 */
import type { GreyFrame } from './frame.ts';

export interface ColourFrame {
  /** Number of columns (pixels along x). */
  readonly width: number;
  /** Number of rows (pixels along y). */
  readonly height: number;
  /** width × height × 3 values 0..255: R, G, B of each pixel in turn, row-major. */
  readonly data: Uint8Array;
}

/**
 * A frame as a colour source yields it: the grey frame (what the subspace counts) and the colour
 * frame of the same picture, or why the picture could not be read. Assignable to FrameItem, so a
 * colour source can stand wherever a grey one is read.
 */
export type ColourFrameItem =
  | { readonly name: string; readonly frame: GreyFrame; readonly colour: ColourFrame; readonly error?: undefined }
  | { readonly name: string; readonly frame?: undefined; readonly colour?: undefined; readonly error: Error };

/** Allocates a black colour frame of the given size. */
export function createColourFrame(width: number, height: number): ColourFrame {
  return { width, height, data: new Uint8Array(3 * width * height) };
}

/**
 * Returns `out` when given and of the right size, else a new colour frame; throws when `out`
 * does not fit (the `out` convention of frame.ts).
 */
export function outputColourFrame(width: number, height: number, out?: ColourFrame): ColourFrame {
  if (out === undefined) return createColourFrame(width, height);
  if (out.width !== width || out.height !== height || out.data.length !== 3 * width * height) {
    throw new RangeError(`out colour frame is ${out.width}×${out.height}, expected ${width}×${height}`);
  }
  return out;
}
