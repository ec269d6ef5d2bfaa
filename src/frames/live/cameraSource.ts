/**
 * The common shape of a live camera source for the long-running counting service: a source is
 * started once with three handlers and delivers grey frames at the working size until stopped.
 *
 * Status, the same for every kind of source:
 * - `connecting`: a connection (HTTP request, ffmpeg process, first folder scan) is being made;
 *   `attempt` counts the consecutive attempts (1 for the first).
 * - `online`: frames can flow. For the HTTP and ffmpeg sources this means the first good frame of
 *   the connection has arrived (so a server that accepts and hangs up at once is not "online");
 *   for a drop folder, that the folder is readable; for the synthetic camera, that it runs.
 *   The reconnection backoff is reset when a source goes online.
 *   A source that knows the size of the images it reads says so with `sourceSize`.
 *   When that size changes — mid-stream, or since the last connection — and the aspect ratio stays
 *   (a camera switched from 640×480 to 1280×960; another aspect ratio is refused as usual), the
 *   source reports `online` again, before the first frame of the new size, with `sourceSize`,
 *   `previousSourceSize` and the reason `source size changed: 640×480 → 1280×960` (see
 *   SOURCE_SIZE_CHANGED), once per change, and goes on delivering the frames resized to the
 *   working size. The counting pipeline marks the counts of that time as unreliable.
 * - `offline`: the source cannot deliver; `reason` says why, and when the source retries by itself
 *   `attempt` (the failed attempt's number) and `retryInMs` (the delay before the next) are set.
 *
 * Frames are never written anywhere: they are handed to `frame` in memory and forgotten.
 */
import type { ColourFrame } from '../../domain/colourFrame.ts';
import type { GreyFrame } from '../../domain/frame.ts';
import type { FrameError } from '../FrameError.ts';
import type { Size } from '../workingSize.ts';

/** States of a live source (see the module comment). */
export const SourceState = { connecting: 'connecting', online: 'online', offline: 'offline' } as const;
export type SourceState = (typeof SourceState)[keyof typeof SourceState];

/** What comes with a status change. */
export interface StatusDetail {
  /** When the change happened, epoch milliseconds. */
  readonly at: number;
  /** Why the source is offline (or which connection failed), or with `online` what changed; a short human-readable text without secrets. */
  readonly reason?: string;
  /** The attempt number (1, 2, …) of the connection being made or that failed. */
  readonly attempt?: number;
  /** With `offline`: milliseconds until the source tries again by itself. */
  readonly retryInMs?: number;
  /** With `online`: the size of the source's images before resizing to the working size (the camera's resolution), when known. */
  readonly sourceSize?: Size;
  /** With `online`: the source size before it changed to `sourceSize` (see the module comment); only when it changed. */
  readonly previousSourceSize?: Size;
}

/** The handlers a source delivers to. They are called synchronously and must not throw. */
export interface CameraHandlers {
  /**
   * A good frame: grey, exactly the configured working size; `capturedAt` in epoch milliseconds;
   * `colour`, the same picture in colour, from sources asked for colour (the colour mode).
   */
  frame(frame: GreyFrame, capturedAt: number, colour?: ColourFrame): void;
  /** The source's state changed (or, while offline, another retry failed). */
  status(state: SourceState, detail: StatusDetail): void;
  /** A single bad frame (undecodable JPEG, wrong size, failed poll): the source keeps going. */
  badFrame(error: FrameError): void;
}

/** A live camera source. */
export interface CameraSource {
  /** The camera id given in the configuration. */
  readonly id: string;
  /** Starts reading; frames and status changes are delivered through the handlers. Call once. */
  start(handlers: CameraHandlers): void;
  /** Stops for good: closes sockets, kills child processes, clears timers; resolves when all is released. */
  stop(): Promise<void>;
}

/**
 * How the `reason` of an `offline` status starts when a source's frames keep the wrong aspect
 * ratio, e.g. `wrong aspect ratio: source is 640×480 (aspect 1.333) but the model is 320×180 …`.
 * The rest is the assertAspect message of the last frame.
 */
export const WRONG_ASPECT = 'wrong aspect ratio';

/**
 * How the `reason` of an `online` status starts when the source's image size changed with the
 * same aspect ratio: `source size changed: 640×480 → 1280×960` (old → new, width×height).
 */
export const SOURCE_SIZE_CHANGED = 'source size changed';
