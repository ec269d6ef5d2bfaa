/**
 * Decoding of one image from a live source (a snapshot, an MJPEG part, a dropped file) into a grey
 * frame at exactly the working size, in memory only.
 */
import sharp from 'sharp';
import { decodeImage } from '../decodeImage.ts';
import type { ColourFrame } from '../../domain/colourFrame.ts';
import type { GreyFrame } from '../../domain/frame.ts';
import { FrameError } from '../FrameError.ts';
import type { Size } from '../workingSize.ts';
import { jpegFrameSize } from './jpegFrameSize.ts';

export interface DecodeLiveFrameOptions {
  /** What error messages call the image: the file path or the URL without credentials. Default `'image'`. */
  name?: string;
  /** Largest accepted image in pixels (inclusive), see decodeImage. Default 100 000 000. */
  limitInputPixels?: number;
  /** Largest aspect-ratio difference resized to `size` (see assertAspect), ≥ 0. Default 0.01 (1 %). */
  aspectTolerance?: number;
  /** Also decode the colour frame (the colour mode), from the same decode. Default false. */
  colour?: boolean;
}

/** A decoded live frame and the size of the image it came from. */
export interface LiveFrame {
  /** Grey, exactly the working size. */
  readonly frame: GreyFrame;
  /** The image's own width × height after EXIF orientation (the camera's resolution). */
  readonly source: Size;
  /** With the `colour` option: the same picture in colour, the working size. */
  readonly colour?: ColourFrame;
}

/**
 * The image resized to exactly `size` (the model's working size) by decodeImage; an image whose
 * aspect ratio differs from `size`'s by more than `aspectTolerance` is refused with the
 * assertAspect message (see {@link isAspectError}). The source size comes from the JPEG headers
 * (jpegFrameSize, no extra decoder call on the hot path of a camera's stream), for other formats
 * from sharp's header reading (`metadata().autoOrient`).
 *
 * @throws FrameError naming `name`: empty, not an image, truncated or corrupt, too many pixels,
 *   wrong aspect ratio.
 */
export async function decodeLiveFrame(bytes: Uint8Array, size: Size, options: DecodeLiveFrameOptions = {}): Promise<LiveFrame> {
  const { name = 'image', limitInputPixels, aspectTolerance = 0.01, colour = false } = options;
  const decoded = await decodeImage(bytes, { width: size.width, height: size.height, aspectTolerance, name, limitInputPixels, colour });
  const source = jpegFrameSize(bytes) ?? (await headerSize(bytes, name));
  const frame = { width: decoded.width, height: decoded.height, data: decoded.data };
  return decoded.colour === undefined ? { frame, source } : { frame, source, colour: decoded.colour };
}

/** The oriented size from sharp's header reading (the image has just decoded, so the header reads). */
async function headerSize(bytes: Uint8Array, name: string): Promise<Size> {
  try {
    const meta = await sharp(bytes, { failOn: 'error', limitInputPixels: false }).metadata();
    const { width, height } = meta.autoOrient ?? { width: meta.width, height: meta.height };
    if (width >= 1 && height >= 1) return { width, height };
  } catch (error) {
    throw new FrameError(name, `cannot read the image size (${(error as Error).message})`, { cause: error });
  }
  throw new FrameError(name, 'image header declares no size');
}

/**
 * Whether a FrameError is the aspect-ratio refusal of {@link decodeLiveFrame} (its message is
 * assertAspect's, which says "the aspect ratios differ by"), as opposed to a damaged image.
 */
export function isAspectError(error: unknown): boolean {
  return error instanceof FrameError && error.message.includes('the aspect ratios differ by');
}
