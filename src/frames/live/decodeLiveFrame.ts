/**
 * Decoding of one image from a live source (a snapshot, an MJPEG part, a dropped file) into a grey
 * frame at exactly the working size, in memory only.
 */
import { decodeImage } from '../decodeImage.ts';
import type { GreyFrame } from '../frame.ts';
import { FrameError } from '../FrameError.ts';
import type { Size } from '../workingSize.ts';

export interface DecodeLiveFrameOptions {
  /** What error messages call the image: the file path or the URL without credentials. Default `'image'`. */
  name?: string;
  /** Largest accepted image in pixels (inclusive), see decodeImage. Default 100 000 000. */
  limitInputPixels?: number;
  /** Largest aspect-ratio difference resized to `size` (see assertAspect), ≥ 0. Default 0.01 (1 %). */
  aspectTolerance?: number;
}

/**
 * The image resized to exactly `size` (the model's working size) by decodeImage; an image whose
 * aspect ratio differs from `size`'s by more than `aspectTolerance` is refused with the
 * assertAspect message (see {@link isAspectError}).
 *
 * @throws FrameError naming `name`: empty, not an image, truncated or corrupt, too many pixels,
 *   wrong aspect ratio.
 */
export function decodeLiveFrame(bytes: Uint8Array, size: Size, options: DecodeLiveFrameOptions = {}): Promise<GreyFrame> {
  const { name = 'image', limitInputPixels, aspectTolerance = 0.01 } = options;
  return decodeImage(bytes, { width: size.width, height: size.height, aspectTolerance, name, limitInputPixels });
}

/**
 * Whether a FrameError is the aspect-ratio refusal of {@link decodeLiveFrame} (its message is
 * assertAspect's, which says "the aspect ratios differ by"), as opposed to a damaged image.
 */
export function isAspectError(error: unknown): boolean {
  return error instanceof FrameError && error.message.includes('the aspect ratios differ by');
}
