import type { ColourFrame } from '../frames/colourFrame.ts';
import { createMask, type Mask } from '../frames/frame.ts';
import { createMaskCounter, type MaskTally } from './createMaskCounter.ts';
import type { Mog2Options } from './createMog2Counter.ts';
import type { Zone } from './zone.ts';

export interface ColourMog2Counter {
  count(colour: ColourFrame): MaskTally;
  lastMask(): Mask;
  /** Frees the opencv.js objects. */
  close(): void;
}

/**
 * The MOG2 baseline (see createMog2Counter) fed colour frames, so that its own shadow detection
 * (`detectShadows`, on by default) can use chromaticity as well as brightness: OpenCV marks a
 * pixel as shadow when it is a darker version of a background Gaussian, brightness ratio within
 * [τ, 1] (τ = 0.5) and small colour distortion (Prati, Mikić, Trivedi & Cucchiara 2003, after
 * Horprasert et al. 1999). Its foreground (255; shadows, 127, as background) goes through the
 * same blob and zone stages as Residuum's own method. The frames are handed over as RGB; MOG2
 * treats the three channels alike, so the channel order does not matter to it.
 *
 * @param cv the opencv.js module (see loadOpenCv).
 */
export function createColourMog2Counter(
  cv: any,
  size: { width: number; height: number },
  zones: readonly Zone[],
  options: Mog2Options = {},
): ColourMog2Counter {
  const { history = 500, varThreshold = 16, detectShadows = true } = options;
  const { width, height } = size;
  const subtractor = new cv.BackgroundSubtractorMOG2(history, varThreshold, detectShadows);
  const input = new cv.Mat(height, width, cv.CV_8UC3);
  const foreground = new cv.Mat(height, width, cv.CV_8UC1);
  const raw = createMask(width, height);
  const stages = createMaskCounter(size, zones, options);
  return {
    count(colour) {
      if (colour.width !== width || colour.height !== height) {
        throw new RangeError(`colour frame is ${colour.width}×${colour.height}, expected ${width}×${height}`);
      }
      (input.data as Uint8Array).set(colour.data);
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
