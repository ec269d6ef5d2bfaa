import sharp, { type OutputInfo } from 'sharp';
import type { ColourFrame } from '../domain/colourFrame.ts';
import type { GreyFrame } from '../domain/frame.ts';
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
  /**
   * Also return the picture in colour at the same size (`colour`, 8-bit sRGB interleaved), from
   * the same decode: the colour mode's input. A grey image gives R = G = B. Default false.
   */
  colour?: boolean;
}

/** A decoded image: the grey working frame and, on request, the same picture in colour. */
export interface DecodedImage extends GreyFrame {
  /** With the `colour` option only: the resized colour pixels the grey frame was made from. */
  readonly colour?: ColourFrame;
}

/**
 * Decodes one image (JPEG, PNG, WebP, TIFF, GIF: whatever sharp/libvips reads) into a grey frame
 * at the working size, in memory only.
 *
 * sharp decodes with the EXIF orientation applied and resizes to exactly the working size (fit
 * `fill`, its default Lanczos-3 kernel, with JPEG/WebP shrink-on-load) in the image's own
 * colours, alpha removed; the grey conversion is then ours (see srgbToGrey: libvips B_W
 * arithmetic, sRGB-linearised BT.709 luminance), on the resized pixels, which costs a small
 * fraction of converting the full-size image first. Output is whole levels 0..255 as Float32.
 * Multi-page images (GIF, TIFF) give their first page. Alpha is ignored.
 *
 * Decoding stops at the first decoder error (sharp `failOn: 'error'`): a truncated or corrupt
 * file is a {@link FrameError}, never a half-grey frame. Decoder warnings that do not damage the
 * pixels are tolerated.
 *
 * @throws FrameError naming `name` and the reason: zero-byte file, unsupported format,
 *   truncated or corrupt image, too many pixels, wrong aspect ratio.
 */
export async function decodeImage(input: Uint8Array, options: DecodeImageOptions = {}): Promise<DecodedImage> {
  const { width, height, longSide = 320, name = 'image', limitInputPixels = 100_000_000, aspectTolerance, colour = false } = options;
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
    const pipeline = sharp(input, { failOn: 'error', limitInputPixels, autoOrient: true })
      .resize(target.width, target.height, { fit: 'fill' })
      .removeAlpha();
    decoded = await (colour ? pipeline.toColourspace('srgb') : pipeline).raw({ depth: 'uchar' }).toBuffer({ resolveWithObject: true });
  } catch (error) {
    throw new FrameError(name, reasonOf(error), { cause: error });
  }
  const { data: bytes, info } = decoded;
  const n = target.width * target.height;
  const channels = info.channels as number;
  if (info.width !== target.width || info.height !== target.height || !(channels === 1 || channels === 3) || bytes.length !== n * channels) {
    throw new FrameError(
      name,
      `decoder returned ${info.width}×${info.height}×${channels} (${bytes.length} bytes), ` +
        `expected ${target.width}×${target.height} grey or RGB`,
    );
  }
  const data = new Float32Array(n);
  if (channels === 1) data.set(bytes);
  else srgbToGrey(bytes, data);
  if (!colour) return { width: target.width, height: target.height, data };
  if (channels !== 3) throw new FrameError(name, `decoder returned ${channels} channels in colour, expected 3`);
  return { width: target.width, height: target.height, data, colour: { width: target.width, height: target.height, data: new Uint8Array(bytes) } };
}

/** sRGB level 0..255 → linear light 0..1 (IEC 61966-2-1 transfer function). */
const SRGB_TO_LINEAR = Float32Array.from({ length: 256 }, (_, v) => {
  const c = v / 255;
  return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
});

/** Steps of the linear-light → sRGB table over 0..1. */
const ENCODE_STEPS = 65535;

/** Linear light i / ENCODE_STEPS → the nearest whole sRGB level 0..255. */
const LINEAR_TO_SRGB = Uint8Array.from({ length: ENCODE_STEPS + 1 }, (_, i) => {
  const l = i / ENCODE_STEPS;
  return Math.round(255 * (l <= 0.0031308 ? 12.92 * l : 1.055 * l ** (1 / 2.4) - 0.055));
});

/**
 * Interleaved 8-bit sRGB → grey levels, as libvips colourspace B_W does it: linearise
 * (IEC 61966-2-1), weight with the BT.709 / sRGB luminance weights 0.2126 R + 0.7152 G +
 * 0.0722 B, encode with the sRGB curve, round to a whole level. Done here rather than by
 * sharp's `greyscale()` because it is the same arithmetic at a fraction of the cost. The
 * encode is a lookup in 65 536 steps of linear light: a step moves the sRGB value by at most
 * 255 · 12.92 / 65 535 ≈ 0.05 level (the steepest part of the curve), so equal channels give
 * back their own level.
 */
function srgbToGrey(rgb: Uint8Array, out: Float32Array): void {
  const linear = SRGB_TO_LINEAR;
  const encode = LINEAR_TO_SRGB;
  for (let i = 0, j = 0; i < out.length; i++, j += 3) {
    const y = 0.2126 * linear[rgb[j]] + 0.7152 * linear[rgb[j + 1]] + 0.0722 * linear[rgb[j + 2]];
    out[i] = encode[Math.min(ENCODE_STEPS, (y * ENCODE_STEPS) | 0)];
  }
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
