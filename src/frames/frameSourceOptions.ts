/** Options shared by every frame source (a folder of images, a video). */
export interface FrameSourceOptions {
  /**
   * Working width in pixels, a whole number ≥ 1. With `height` it is the exact size of every
   * frame (the model's size); sources whose aspect ratio is more than 1 % off are errors. Alone,
   * the height follows the first frame's aspect ratio. Default: unset (see `longSide`).
   */
  width?: number;
  /** Working height in pixels, a whole number ≥ 1; only together with `width`. Default: unset. */
  height?: number;
  /** Longer working side in pixels, a whole number ≥ 1, used when `width` is unset. Default 320. */
  longSide?: number;
  /** Keep one frame in `every`: source frames 0, every, 2·every, … (a whole number ≥ 1). Default 1 (all). */
  every?: number;
  /** Stop after this many items (frames and error items alike), a whole number ≥ 1. Default: no limit. */
  limit?: number;
  /** Stops reading: the iterator then throws the signal's reason, and a running decoder process is killed. */
  signal?: AbortSignal;
}

/** {@link FrameSourceOptions} checked, with defaults applied. */
export interface ResolvedFrameSourceOptions {
  readonly width: number | undefined;
  readonly height: number | undefined;
  readonly longSide: number;
  readonly every: number;
  readonly limit: number;
  readonly signal: AbortSignal | undefined;
}

/**
 * Validates the shared frame source options at the edge, with messages naming the field, and
 * applies the defaults (`limit` becomes Infinity when unset).
 */
export function frameSourceOptions(options: FrameSourceOptions = {}): ResolvedFrameSourceOptions {
  const { width, height, longSide = 320, every = 1, limit = Infinity, signal } = options;
  if (width !== undefined) wholePositive(width, 'width');
  if (height !== undefined) {
    wholePositive(height, 'height');
    if (width === undefined) throw new RangeError('height needs width: give both (the model size) or width alone');
  }
  wholePositive(longSide, 'longSide');
  wholePositive(every, 'every');
  if (limit !== Infinity) wholePositive(limit, 'limit');
  if (signal !== undefined && !(signal instanceof AbortSignal)) throw new TypeError('signal must be an AbortSignal');
  return { width, height, longSide, every, limit, signal };
}

function wholePositive(value: unknown, field: string): void {
  if (!(typeof value === 'number' && Number.isInteger(value) && value >= 1)) {
    throw new RangeError(`${field} must be a whole number ≥ 1, got ${String(value)}`);
  }
}
