import type { ColourFrame } from '../domain/colourFrame.ts';
import type { GreyFrame, Mask } from '../domain/frame.ts';
import type { PreparedZone } from '../vision/prepareZones.ts';
import type { Subspace } from '../vision/subspace.ts';
import type { FrameCount } from './createCounter.ts';
import { createDriftingCounter, type DriftingCounterOptions } from './createDriftingCounter.ts';
import { createBlobFollower, type FollowBlobsOptions } from './followBlobs.ts';
import type { Zone } from '../domain/zone.ts';

export interface SequenceCounterOptions extends Omit<DriftingCounterOptions, 'clock'> {
  /** Frames per second of the sequence (its clock for drift; > 0, default 10). */
  framesPerSecond?: number;
  /** Follow blobs from frame to frame (createBlobFollower); default true. */
  follow?: boolean;
  /** Options of the follower. */
  following?: FollowBlobsOptions;
}

/** What a counted sequence looked like, for warnings. */
export interface SequenceSummary {
  /** Frames counted. */
  readonly frames: number;
  /** Median over the frames of their noise relative to the learning frames (1 = as learned). */
  readonly medianNoiseScale: number;
  /** Share of frames whose noise was more than 3 times the learned. */
  readonly strangeShare: number;
}

export interface SequenceCounter {
  readonly zones: readonly PreparedZone[];
  /** Counts the next frame of the sequence (colour mode: with its colour frame). */
  count(frame: GreyFrame, colour?: ColourFrame): FrameCount;
  lastMask(): Mask;
  summary(): SequenceSummary;
}

/**
 * Counts the frames of a recorded sequence (a video, a folder of images in order) as the live
 * service counts a camera: the background follows slow drift of the light on the sequence's own
 * clock (createDriftingCounter), and blobs are followed from frame to frame (createBlobFollower),
 * so that one-frame flickers do not count and groups keep their count while they merge and split.
 */
export function createSequenceCounter(model: Subspace, zones: readonly Zone[], options: SequenceCounterOptions = {}): SequenceCounter {
  const { framesPerSecond = 10, follow = true, following = {} } = options;
  if (!(framesPerSecond > 0 && Number.isFinite(framesPerSecond))) throw new RangeError(`framesPerSecond must be a number > 0, got ${framesPerSecond}`);
  let index = 0;
  const counter = createDriftingCounter(model, zones, { ...options, clock: () => (index * 1000) / framesPerSecond });
  const follower = follow ? createBlobFollower(counter.zones, model, following) : undefined;
  const noiseScales: number[] = [];
  return {
    zones: counter.zones,
    count(frame, colour) {
      const plain = counter.count(frame, colour);
      index++;
      noiseScales.push(plain.noiseScale);
      return follower === undefined ? plain : { ...plain, ...follower.tally(plain.blobs, plain) };
    },
    lastMask: () => counter.lastMask(),
    summary() {
      const sorted = [...noiseScales].sort((a, b) => a - b);
      const n = sorted.length;
      return {
        frames: n,
        medianNoiseScale: n === 0 ? NaN : sorted[n >> 1],
        strangeShare: n === 0 ? 0 : sorted.filter((s) => s > 3).length / n,
      };
    },
  };
}

/**
 * A warning in words when the frames do not look like the scene the model was learned from
 * (most frames far noisier than the learning frames: another view, a moved camera, another
 * size), or undefined. Rule of thumb of ours: 3 times the learned noise in half the frames.
 */
export function sceneMismatchWarning(summary: SequenceSummary): string | undefined {
  if (summary.frames === 0 || summary.strangeShare < 0.5) return undefined;
  return (
    `the frames do not look like the scene the model was learned from: in ${(summary.strangeShare * 100).toFixed(0)} % of them the difference is more than 3 times ` +
    `what the model expects (median ${summary.medianNoiseScale.toFixed(1)} times), so thresholds were raised and counts are likely too low; ` +
    `check that the model is of this camera and view, or learn it again from these frames`
  );
}
