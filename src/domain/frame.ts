/**
 * The one frame type of the pipeline.
 *
 * A grey frame is row-major: `data[y * width + x]` is the pixel in column x (0 at the left, growing
 * to the right) and row y (0 at the top, growing downwards), a grey level in 0..255 stored as
 * Float32 so that stages can do arithmetic on it without conversions. Zones are drawn in the same
 * x/y directions, in normalised coordinates (0..1 of width and height).
 *
 * Frames live only in memory: nothing in the project writes one to disk, the database, a log or
 * the network.
 */
export interface GreyFrame {
  /** Number of columns (pixels along x). */
  readonly width: number;
  /** Number of rows (pixels along y). */
  readonly height: number;
  /** width × height grey levels, 0..255, row-major. */
  readonly data: Float32Array;
}

/**
 * A binary mask over a frame, same layout as {@link GreyFrame}: 1 where set, 0 elsewhere.
 */
export interface Mask {
  readonly width: number;
  readonly height: number;
  readonly data: Uint8Array;
}

/** A frame as it comes out of a source: its name (file name or index) and pixels, or why it failed. */
export type FrameItem =
  | { readonly name: string; readonly frame: GreyFrame; readonly error?: undefined }
  | { readonly name: string; readonly frame?: undefined; readonly error: Error };

/** Allocates a black frame of the given size. */
export function createFrame(width: number, height: number): GreyFrame {
  return { width, height, data: new Float32Array(width * height) };
}

/** Allocates an empty mask of the given size. */
export function createMask(width: number, height: number): Mask {
  return { width, height, data: new Uint8Array(width * height) };
}

/**
 * Returns `out` when given and of the right size, else a new mask; throws when `out` does not fit.
 * The `out` convention of the hot path: allocate by default, reuse the caller's buffer if given.
 */
export function outputMask(width: number, height: number, out?: Mask): Mask {
  if (out === undefined) return createMask(width, height);
  if (out.width !== width || out.height !== height || out.data.length !== width * height) {
    throw new RangeError(`out mask is ${out.width}×${out.height}, expected ${width}×${height}`);
  }
  return out;
}

/** Throws unless both images have the same width and height. */
export function assertSameSize(
  a: { width: number; height: number },
  b: { width: number; height: number },
  what = 'image',
): void {
  if (a.width !== b.width || a.height !== b.height) {
    throw new RangeError(`${what} is ${b.width}×${b.height}, expected ${a.width}×${a.height}`);
  }
}
