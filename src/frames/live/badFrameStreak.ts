/**
 * Counting bad frames in a row, to tell a source that hiccups (one bad JPEG now and then: reported
 * as a bad frame, the source stays online) from one whose frames are all unusable (reported
 * offline).
 */
import type { FrameError } from '../FrameError.ts';
import { WRONG_ASPECT } from './cameraSource.ts';
import { isAspectError } from './decodeLiveFrame.ts';

/** A counter of consecutive bad frames. */
export interface BadFrameStreak {
  /** Bad frames since the last good one. */
  readonly count: number;
  /**
   * Counts a bad frame; from the `limit`-th in a row on, returns the offline reason: when every
   * frame of the streak had the wrong aspect ratio, `wrong aspect ratio: <assertAspect message>`
   * (see WRONG_ASPECT), else `<n> bad frames in a row, the last: <message>`. Below the limit,
   * undefined.
   */
  bad(error: FrameError): string | undefined;
  /** A good frame ends the streak. */
  good(): void;
}

/**
 * A streak counter that reports at `limit` consecutive bad frames (a whole number ≥ 1).
 *
 * Example: with limit 3, bad(e) → undefined, bad(e) → undefined, bad(e) → '3 bad frames in a row, the last: …'.
 */
export function badFrameStreak(limit: number): BadFrameStreak {
  if (!(Number.isInteger(limit) && limit >= 1)) throw new RangeError(`bad frame limit must be a whole number ≥ 1, got ${String(limit)}`);
  let count = 0;
  let allAspect = true;
  return {
    get count() {
      return count;
    },
    bad(error) {
      count++;
      allAspect &&= isAspectError(error);
      if (count < limit) return undefined;
      if (allAspect) return offlineReason(error);
      return `${count} bad frames in a row, the last: ${error.message}`;
    },
    good() {
      count = 0;
      allAspect = true;
    },
  };
}

/**
 * The offline reason for one failure: for a wrong aspect ratio `wrong aspect ratio: <assertAspect
 * message>` (see WRONG_ASPECT), else the error's message.
 */
export function offlineReason(error: FrameError): string {
  if (!isAspectError(error)) return error.message;
  // The FrameError message is "<source>: <assertAspect message>"; keep the latter.
  const prefix = `${error.source}: `;
  const message = error.message.startsWith(prefix) ? error.message.slice(prefix.length) : error.message;
  return `${WRONG_ASPECT}: ${message}`;
}
