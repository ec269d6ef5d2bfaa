/** A width and height in pixels. */
export interface Size {
  readonly width: number;
  readonly height: number;
}

export interface WorkingSizeOptions {
  /**
   * Working width in pixels, a whole number ≥ 1; the height then follows the source aspect
   * ratio. Takes precedence over `longSide`. Default: unset.
   */
  width?: number;
  /** Length of the longer working side in pixels, a whole number ≥ 1, used when `width` is unset. Default 320. */
  longSide?: number;
}

/**
 * The working resolution for a source of the given size, keeping its aspect ratio.
 *
 * With `width`, height = round(width · sourceHeight / sourceWidth). Otherwise the longer side
 * becomes exactly `longSide` and the shorter one round(longSide · short / long). The shorter
 * side is at least 1. Upscaling is allowed on purpose: the model fixes the working size, and a
 * source smaller than it must still produce frames of that size (a 160×120 camera gives 320×240
 * frames with the default). Ties (a square source) take the width as the long side.
 *
 * Example: workingSize(1920, 1080) = {width: 320, height: 180};
 * workingSize(1920, 1080, {width: 100}) = {width: 100, height: 56}.
 */
export function workingSize(sourceWidth: number, sourceHeight: number, options: WorkingSizeOptions = {}): Size {
  const { width, longSide = 320 } = options;
  assertWholePositive(sourceWidth, 'source width');
  assertWholePositive(sourceHeight, 'source height');
  if (width !== undefined) {
    assertWholePositive(width, 'width');
    return { width, height: Math.max(1, Math.round((width * sourceHeight) / sourceWidth)) };
  }
  assertWholePositive(longSide, 'longSide');
  if (sourceWidth >= sourceHeight) {
    return { width: longSide, height: Math.max(1, Math.round((longSide * sourceHeight) / sourceWidth)) };
  }
  return { width: Math.max(1, Math.round((longSide * sourceWidth) / sourceHeight)), height: longSide };
}

/**
 * Throws a RangeError naming both sizes when the source's aspect ratio (width / height) differs
 * from the model's by more than `tolerance`, relative to the source's: |a_model / a_source − 1| >
 * tolerance (the bound is inclusive: exactly 1 % passes with the default). Within the tolerance,
 * callers resize the source to the model size, stretching it by at most that much.
 *
 * Sizes made by {@link workingSize} from the source pass whenever their shorter side is at least
 * 50 pixels (rounding moves it by at most half a pixel, i.e. ≤ 1 %).
 *
 * @param tolerance relative tolerance, ≥ 0; default 0.01 (1 %).
 */
export function assertAspect(model: Size, source: Size, tolerance = 0.01): void {
  if (!(tolerance >= 0)) throw new RangeError(`tolerance must be a number ≥ 0, got ${tolerance}`);
  const modelAspect = model.width / model.height;
  const sourceAspect = source.width / source.height;
  const difference = Math.abs(modelAspect / sourceAspect - 1);
  // 1e-12 absorbs floating-point error so that the bound stays inclusive (101×100 vs 100×100 is 1 %).
  if (!(difference <= tolerance + 1e-12)) {
    throw new RangeError(
      `source is ${source.width}×${source.height} (aspect ${sourceAspect.toFixed(3)}) but the model is ` +
        `${model.width}×${model.height} (aspect ${modelAspect.toFixed(3)}): the aspect ratios differ by ` +
        `${(difference * 100).toFixed(1)} %, more than the ${(tolerance * 100).toFixed(1)} % allowed`,
    );
  }
}

function assertWholePositive(value: number, field: string): void {
  if (!(Number.isInteger(value) && value >= 1)) {
    throw new RangeError(`${field} must be a whole number ≥ 1, got ${value}`);
  }
}
