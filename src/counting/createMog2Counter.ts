import type { ColourFrame } from '../domain/colourFrame.ts';
import { createMask, type GreyFrame, type Mask } from '../domain/frame.ts';
import { createMaskCounter, type MaskCounterOptions, type MaskTally } from './createMaskCounter.ts';
import type { PreparedZone } from '../vision/prepareZones.ts';
import type { Zone } from '../domain/zone.ts';

export interface Mog2Options extends MaskCounterOptions {
  /** Frames of history (OpenCV's default 500). */
  history?: number;
  /** Squared Mahalanobis distance threshold (OpenCV's default 16). */
  varThreshold?: number;
  /** Mark shadows (OpenCV's default true); shadow pixels count as background here. */
  detectShadows?: boolean;
  /**
   * Feed MOG2 the colour frames instead of the grey ones, so that its shadow detection can use
   * chromaticity as well as brightness; then every count needs the colour frame. Default false.
   */
  colour?: boolean;
}

export interface Mog2Counter {
  /** The zones as prepared at the frame size. */
  readonly zones: readonly PreparedZone[];
  /** Counts the next frame; with the `colour` option, its colour frame is what MOG2 sees. */
  count(frame: GreyFrame, colour?: ColourFrame): MaskTally;
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
 * With `colour`, MOG2 gets the colour frames: OpenCV marks a pixel as shadow when it is a darker
 * version of a background Gaussian, brightness ratio within [τ, 1] (τ = 0.5) and small colour
 * distortion (Prati, Mikić, Trivedi & Cucchiara 2003, after Horprasert et al. 1999). MOG2 treats
 * the three channels alike, so their order (RGB here) does not matter to it.
 *
 * @param cv the opencv.js module (see loadOpenCv).
 */
export function createMog2Counter(
  cv: any,
  size: { width: number; height: number },
  zones: readonly Zone[],
  options: Mog2Options = {},
): Mog2Counter {
  const { history = 500, varThreshold = 16, detectShadows = true, colour = false } = options;
  const { width, height } = size;
  const subtractor = new cv.BackgroundSubtractorMOG2(history, varThreshold, detectShadows);
  const input = new cv.Mat(height, width, colour ? cv.CV_8UC3 : cv.CV_8UC1);
  const foreground = new cv.Mat(height, width, cv.CV_8UC1);
  const raw = createMask(width, height);
  const stages = createMaskCounter(size, zones, options);
  return {
    zones: stages.zones,
    count(frame, picture) {
      const pixels = input.data as Uint8Array;
      if (colour) {
        if (picture === undefined || picture.width !== width || picture.height !== height) {
          throw new RangeError(`colour mode: count(frame, colour) needs a ${width}×${height} colour frame`);
        }
        pixels.set(picture.data);
      } else {
        for (let i = 0; i < pixels.length; i++) pixels[i] = frame.data[i];
      }
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
