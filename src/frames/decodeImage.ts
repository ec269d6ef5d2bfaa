import sharp, { type OutputInfo } from 'sharp';
import type { GreyFrame } from './frame.ts';
import { FrameError } from './FrameError.ts';
import { assertAspect, workingSize } from './workingSize.ts';

export interface DecodeImageOptions {
  /**
   * Output width in pixels, a whole number ≥ 1. With `height`, the image is resized to exactly
   * width × height; alone, the height follows the image's aspect ratio. Default: unset.
   */
  width?: number;
  /** Output height in pixels, a whole number ≥ 1; only together with `width`. Default: unset. */
  height?: number;
  /** Length of the longer output side in pixels when `width` is unset; a whole number ≥ 1. Default 320. */
  longSide?: number;
  /** What error messages call the input (a file name). Default `'image'`. */
  name?: string;
  /**
   * Largest accepted image, in pixels (width × height as declared in the header, after EXIF
   * orientation); larger ones are refused before decoding (decompression bombs). Inclusive
   * bound, a whole number ≥ 1. Default 100 000 000 (100 megapixels).
   */
  limitInputPixels?: number;
  /**
   * With `width` and `height` both given: the largest relative aspect-ratio difference between
   * the image and width × height that is resized (see assertAspect); beyond it the image is an
   * error. Unset (the default): no check, the image is stretched to fit.
   */
  aspectTolerance?: number;
}

/**
 * Decodes one image (JPEG, PNG, WebP, TIFF, GIF: whatever sharp/libvips reads) into a grey frame
 * at the working size, in memory only.
 *
 * The pipeline is sharp's: EXIF orientation applied, `greyscale()` (libvips colourspace B_W:
 * the sRGB values are linearised, weighted 0.2126 R + 0.7152 G + 0.0722 B — the ITU-R BT.709 /
 * sRGB luminance weights — and encoded back with the sRGB curve), then a resize to exactly the
 * working size (fit `fill`, sharp's default Lanczos-3 kernel, with JPEG/WebP shrink-on-load), then
 * raw 8-bit output, converted to Float32 levels 0..255. Multi-page images (GIF, TIFF) give their
 * first page. Alpha is ignored.
 *
 * Decoding stops at the first decoder error (sharp `failOn: 'error'`): a truncated or corrupt
 * file is a {@link FrameError}, never a half-grey frame. Decoder warnings that do not damage the
 * pixels are tolerated.
 *
 * @throws FrameError naming `name` and the reason: zero-byte file, unsupported format,
 *   truncated or corrupt image, too many pixels, wrong aspect ratio.
 */
export async function decodeImage(input: Uint8Array, options: DecodeImageOptions = {}): Promise<GreyFrame> {
  const { width, height, longSide = 320, name = 'image', limitInputPixels = 100_000_000, aspectTolerance } = options;
  for (const [field, value] of [['width', width], ['height', height], ['longSide', longSide], ['limitInputPixels', limitInputPixels]] as const) {
    if (value !== undefined && !(Number.isInteger(value) && value >= 1)) {
      throw new RangeError(`${field} must be a whole number ≥ 1, got ${value}`);
    }
  }
  if (height !== undefined && width === undefined) throw new RangeError('height needs width');
  if (aspectTolerance !== undefined && !(aspectTolerance >= 0)) {
    throw new RangeError(`aspectTolerance must be a number ≥ 0, got ${aspectTolerance}`);
  }
  if (input.length === 0) throw new FrameError(name, 'zero-byte file');

  // The header first: size, and the pixel limit checked by us so that the message can say why.
  let source: { width: number; height: number };
  try {
    const meta = await sharp(input, { failOn: 'error', limitInputPixels: false }).metadata();
    source = meta.autoOrient ?? { width: meta.width, height: meta.height };
  } catch (error) {
    throw new FrameError(name, reasonOf(error), { cause: error });
  }
  if (!(source.width >= 1 && source.height >= 1)) throw new FrameError(name, 'image header declares no size');
  const pixels = source.width * source.height;
  if (pixels > limitInputPixels) {
    throw new FrameError(
      name,
      `image declares ${source.width}×${source.height} = ${pixels} pixels, more than limitInputPixels ` +
        `(${limitInputPixels}); not decoded`,
    );
  }
  const target =
    width !== undefined && height !== undefined
      ? { width, height }
      : workingSize(source.width, source.height, { width, longSide });
  if (aspectTolerance !== undefined && height !== undefined) {
    try {
      assertAspect(target, source, aspectTolerance);
    } catch (error) {
      throw new FrameError(name, (error as Error).message);
    }
  }

  let decoded: { data: Uint8Array; info: OutputInfo };
  try {
    decoded = await sharp(input, { failOn: 'error', limitInputPixels, autoOrient: true })
      .greyscale()
      .resize(target.width, target.height, { fit: 'fill' })
      .raw()
      .toBuffer({ resolveWithObject: true });
  } catch (error) {
    throw new FrameError(name, reasonOf(error), { cause: error });
  }
  const { data: bytes, info } = decoded;
  const n = target.width * target.height;
  if (info.width !== target.width || info.height !== target.height || info.channels !== 1 || bytes.length !== n) {
    throw new FrameError(
      name,
      `decoder returned ${info.width}×${info.height}×${info.channels} (${bytes.length} bytes), ` +
        `expected ${target.width}×${target.height}×1`,
    );
  }
  const data = new Float32Array(n);
  data.set(bytes);
  return { width: target.width, height: target.height, data };
}

/** A short, single-line reason from a sharp/libvips error (its lines deduplicated). */
function reasonOf(error: unknown): string {
  const message = error instanceof Error ? error.message : String(error);
  if (/unsupported image format/i.test(message)) return 'not an image, or an image format that cannot be read';
  if (/pixel limit/i.test(message)) return 'image has more pixels than limitInputPixels';
  const lines = [...new Set(message.split('\n').map((line) => line.trim()).filter((line) => line !== ''))];
  let detail = lines.join('; ');
  if (detail.length > 300) detail = `${detail.slice(0, 297)}...`;
  return `truncated or corrupt image (${detail})`;
}
