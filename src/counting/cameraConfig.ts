import type { Zone } from '../domain/zone.ts';
import type { CameraSourceDescription } from '../frames/live/createCameraSource.ts';

/** How per-frame counts are smoothed before sampling. */
export interface SmoothingConfig {
  /** Frames in the sliding window (≥ 1; 1 = no smoothing). */
  readonly window: number;
  /** `median` (robust to single-frame glitches) or `mean`. */
  readonly method: 'median' | 'mean';
}

/** One camera as counting runs it: validated from the configuration file (src/config/loadConfig.ts). */
export interface CameraConfig {
  readonly id: string;
  readonly name: string;
  /** The live source, with the working size filled in. */
  readonly source: CameraSourceDescription;
  /** A model file (resolved against the configuration file's folder), or undefined to use the stored one. */
  readonly model?: string;
  /** Seconds of frames to learn from at start when no model exists (the view must be empty then). */
  readonly learnSeconds: number;
  /** Seconds between two stored samples per zone. */
  readonly sampleSeconds: number;
  readonly smoothing: SmoothingConfig;
  /** Default foreground threshold for this camera's zones, noise units. */
  readonly threshold: number;
  /**
   * Follow slow drift of the empty scene (daylight, lamps, exposure) from pixels judged
   * background; absent: createDriftingCounter's default (on). See README "Counting in real rooms".
   */
  readonly adaptToDrift?: boolean;
  readonly zones: readonly Zone[];
}
