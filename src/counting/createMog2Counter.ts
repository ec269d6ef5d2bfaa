import { createMask, type GreyFrame, type Mask } from '../frames/frame.ts';
import { createMaskCounter, type MaskCounterOptions, type MaskTally } from './createMaskCounter.ts';
import type { Zone } from './zone.ts';

export interface Mog2Options extends MaskCounterOptions {
  /** Frames of history (OpenCV's default 500). */
  history?: number;
  /** Squared Mahalanobis distance threshold (OpenCV's default 16). */
  varThreshold?: number;
  /** Mark shadows (OpenCV's default true); shadow pixels count as background here. */
  detectShadows?: boolean;
}

export interface Mog2Counter {
  count(frame: GreyFrame): MaskTally;
  lastMask(): Mask;
  /** Frees the opencv.js objects. */
  close(): void;
}

/**
 * A baseline for comparison: OpenCV's Gaussian-mixture background subtractor
 * (BackgroundSubtractorMOG2: Zivkovic 2004; Zivkovic & van der Heijden 2006) from opencv.js,
 * fed the frames in order, its foreground (255; shadows, 127, as background) passed through the
 * same blob and zone stages as Residuum's own method.
 *
 * @param cv the opencv.js module (see loadOpenCv).
 */
export function createMog2Counter(
  cv: any,
  size: { width: number; height: number },
  zones: readonly Zone[],
  options: Mog2Options = {},
): Mog2Counter {
  const { history = 500, varThreshold = 16, detectShadows = true } = options;
  const { width, height } = size;
  const subtractor = new cv.BackgroundSubtractorMOG2(history, varThreshold, detectShadows);
  const input = new cv.Mat(height, width, cv.CV_8UC1);
  const foreground = new cv.Mat(height, width, cv.CV_8UC1);
  const raw = createMask(width, height);
  const stages = createMaskCounter(size, zones, options);
  return {
    count(frame) {
      const pixels = input.data as Uint8Array;
      for (let i = 0; i < pixels.length; i++) pixels[i] = frame.data[i];
      subtractor.apply(input, foreground);
      const fg = foreground.data as Uint8Array;
      for (let i = 0; i < fg.length; i++) raw.data[i] = fg[i] === 255 ? 1 : 0;
      return stages.count(raw);
    },
    lastMask: () => stages.lastMask(),
    close() {
      input.delete();
      foreground.delete();
      subtractor.delete();
    },
  };
}
