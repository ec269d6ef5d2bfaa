import sharp, { type OutputInfo } from 'sharp';
import { createColourFrame, type ColourFrame } from './colourFrame.ts';
import { FrameError } from './FrameError.ts';

export interface DecodeColourOptions {
  /** Output width in pixels, a whole number ≥ 1: the grey frame's (the model's) width. Required. */
  width: number;
  /** Output height in pixels, a whole number ≥ 1: the grey frame's height. Required. */
  height: number;
  /** What error messages call the input (a file name). Default `'image'`. */
  name?: string;
  /**
   * Largest accepted image, in pixels (width × height as declared in the header); larger ones are
   * refused by the decoder (decompression bombs). Inclusive bound, a whole number ≥ 1. Default
   * 100 000 000, as decodeImage.
   */
  limitInputPixels?: number;
}

/**
 * Decodes one image into an 8-bit sRGB colour frame of exactly width × height, in memory only:
 * the colour companion of decodeImage's grey frame, for the colour mode (shadow suppression).
 *
 * The pipeline mirrors decodeImage's, so that both frames line up pixel for pixel: sharp with
 * `failOn: 'error'` and the same input pixel limit, EXIF orientation applied, alpha removed,
 * converted to sRGB (a grey image gives R = G = B), resized to exactly width × height (fit
 * `fill`, sharp's default Lanczos-3 kernel), raw 8-bit output. Multi-page images give their
 * first page. Call it after decodeImage has accepted the same bytes (readColourFolder does): the
 * header checks, aspect-ratio check and their messages are decodeImage's.
 *
 * @throws FrameError naming `name` and the reason: zero-byte file, unreadable or corrupt image,
 *   too many pixels, or a decoder result of the wrong shape.
 */
export async function decodeColour(input: Uint8Array, options: DecodeColourOptions): Promise<ColourFrame> {
  const { width, height, name = 'image', limitInputPixels = 100_000_000 } = options;
  for (const [field, value] of [['width', width], ['height', height], ['limitInputPixels', limitInputPixels]] as const) {
    if (!(Number.isInteger(value) && value >= 1)) throw new RangeError(`${field} must be a whole number ≥ 1, got ${value}`);
  }
  if (input.length === 0) throw new FrameError(name, 'zero-byte file');
  let decoded: { data: Uint8Array; info: OutputInfo };
  try {
    decoded = await sharp(input, { failOn: 'error', limitInputPixels, autoOrient: true })
      .removeAlpha()
      .toColourspace('srgb')
      .resize(width, height, { fit: 'fill' })
      .raw({ depth: 'uchar' })
      .toBuffer({ resolveWithObject: true });
  } catch (error) {
    throw new FrameError(name, colourReason(error), { cause: error });
  }
  const { data: bytes, info } = decoded;
  const frame = createColourFrame(width, height);
  if (info.width !== width || info.height !== height || info.channels !== 3 || bytes.length !== frame.data.length) {
    throw new FrameError(
      name,
      `colour decoder returned ${info.width}×${info.height}×${info.channels} (${bytes.length} bytes), expected ${width}×${height}×3`,
    );
  }
  frame.data.set(bytes);
  return frame;
}

/**
 * A short, single-line reason from a sharp/libvips error. decodeImage has its own (not exported);
 * the colour decoder only runs on bytes decodeImage accepted, so this one is rarely seen.
 */
function colourReason(error: unknown): string {
  const message = error instanceof Error ? error.message : String(error);
  if (/unsupported image format/i.test(message)) return 'not an image, or an image format that cannot be read';
  if (/pixel limit/i.test(message)) return 'image has more pixels than limitInputPixels';
  const first = message.split('\n').map((line) => line.trim()).find((line) => line !== '') ?? 'unknown decoder error';
  return `colour decoding failed (${first.length > 200 ? `${first.slice(0, 197)}...` : first})`;
}
