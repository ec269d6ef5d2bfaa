/**
 * A camera's snapshot URL (`http://camera/snapshot.jpg`) polled as a live source.
 */
import http from 'node:http';
import https from 'node:https';
import type { IncomingMessage } from 'node:http';
import type { LookupFunction } from 'node:net';
import type { ColourFrame } from '../../domain/colourFrame.ts';
import type { GreyFrame } from '../../domain/frame.ts';
import { FrameError } from '../FrameError.ts';
import type { Size } from '../workingSize.ts';
import { createRetryScheduler, type BackoffOptions } from './backoff.ts';
import { badFrameStreak, offlineReason } from './badFrameStreak.ts';
import type { CameraHandlers, CameraSource, SourceState, StatusDetail } from './cameraSource.ts';
import { checkSize, checkText, checkWhole } from './checkOptions.ts';
import { systemClock, type Clock } from './clock.ts';
import { decodeLiveFrame } from './decodeLiveFrame.ts';
import { checkCameraUrl, httpGet, redactUrl, requestFailure } from './httpGet.ts';
import { sourceSizeChange } from './sourceSizeChange.ts';

export interface SnapshotPollerOptions {
  /** The camera id (for the caller; not sent anywhere). Required. */
  id: string;
  /** The working size every frame is resized to (the model's), whole pixels ≥ 1. Required. */
  size: Size;
  /** Time between the starts of two polls while online, milliseconds, a whole number ≥ 1. Default 1000. */
  intervalMs?: number;
  /** Longest a poll may take, from sending the request to the last byte of the image, milliseconds, a whole number ≥ 1. Default 10000. */
  timeoutMs?: number;
  /** User name for HTTP Basic authentication. Default: the URL's, if any; else none. */
  username?: string;
  /** Password for HTTP Basic authentication. Default: the URL's, if any; else empty. */
  password?: string;
  /** Largest accepted response body, bytes (inclusive), a whole number ≥ 1. Default 20 MiB. */
  maxBytes?: number;
  /** Failed polls in a row after which an online source goes offline, a whole number ≥ 1. Default 3. */
  failuresBeforeOffline?: number;
  /** Delays between polls while offline (see backoff.ts). Default: 1 s doubling up to 60 s, full jitter. */
  backoff?: BackoffOptions;
  /** Largest image accepted in pixels (inclusive), see decodeImage. Default 100 000 000. */
  limitInputPixels?: number;
  /** Also deliver each frame in colour (the colour mode; see decodeLiveFrame). Default false. */
  colour?: boolean;
  /** Time source; tests only. Default the system clock. */
  clock?: Clock;
  /** Uniform random numbers in [0, 1) for the backoff jitter; tests only. Default Math.random. */
  random?: () => number;
  /** Resolves the camera's host name (signature of dns.lookup); tests only. Default the system resolver. */
  lookup?: LookupFunction;
}

/** A good poll: the frame, the image's own size, and when the response came. */
interface Snapshot {
  readonly frame: GreyFrame;
  readonly source: Size;
  readonly capturedAt: number;
  readonly colour?: ColourFrame;
}

/** A failed poll: what went wrong, and whether a 2xx response had arrived (so it counts as a bad frame). */
interface Failure {
  readonly error: FrameError;
  readonly afterResponse: boolean;
}

/**
 * Polls `url` (http: or https:) for a JPEG (or any image sharp reads), one request at a time:
 * the next poll starts `intervalMs` after the previous one started, or as soon as it ends when it
 * took longer, so two requests are never in flight. Each image is decoded to a grey frame at
 * `size`; `capturedAt` is when the response headers arrived.
 *
 * A poll fails when the request cannot be made (connection refused, TLS, a host name that does
 * not resolve: `request failed: cannot resolve host <name> (<code>)`), the status is not
 * 2xx, the response is not an image (Content-Type other than image/* or
 * application/octet-stream, e.g. an HTML error page), is empty (0 bytes), larger than
 * `maxBytes`, cut off, not complete within `timeoutMs` (a slow drip), or does not decode
 * (truncated JPEG, wrong aspect ratio). Then:
 * - while online, the failure is reported as `badFrame` and polling goes on at `intervalMs`;
 *   at the `failuresBeforeOffline`-th failure in a row the source goes `offline` (reason
 *   `N bad frames in a row, the last: …`, or `wrong aspect ratio: …` when they all were);
 * - while not online (the first poll, or retries after going offline), one failure is enough to
 *   be `offline` (reason: the failure); failures that came with a 2xx response are also reported
 *   as `badFrame`.
 * While offline, polls are retried after exponential-backoff delays, each announced by
 * `connecting`; the first good frame makes the source `online` again and resets the backoff.
 *
 * Every `online` status carries the images' own size (`sourceSize`); when it changes with the
 * same aspect ratio, `online` is reported again before the first frame of the new size (see
 * cameraSource.ts), and polling goes on.
 *
 * The URL in messages has no credentials and no query values (see redactUrl). Keep-alive
 * connections are reused between polls and all closed on stop.
 */
export function snapshotPoller(url: string, options: SnapshotPollerOptions): CameraSource {
  const {
    id,
    size,
    intervalMs = 1000,
    timeoutMs = 10_000,
    username,
    password,
    maxBytes = 20 * 1024 * 1024,
    failuresBeforeOffline = 3,
    backoff = {},
    limitInputPixels,
    colour = false,
    clock = systemClock,
    random = Math.random,
    lookup,
  } = options;
  checkText(id, 'id');
  checkSize(size);
  checkWhole(intervalMs, 'intervalMs', 1);
  checkWhole(timeoutMs, 'timeoutMs', 1);
  checkWhole(maxBytes, 'maxBytes', 1);
  checkWhole(failuresBeforeOffline, 'failuresBeforeOffline', 1);
  if (lookup !== undefined && typeof lookup !== 'function') throw new TypeError('lookup must be a function like dns.lookup');
  const target = checkCameraUrl(url, username, password);
  const name = redactUrl(url);
  const retry = createRetryScheduler({ ...backoff, clock, random });
  const agent = new (target.protocol === 'https:' ? https.Agent : http.Agent)({ keepAlive: true, maxSockets: 1 });

  let handlers: CameraHandlers | undefined;
  let stopped = false;
  let state: SourceState | undefined;
  let timer: unknown;
  let controller: AbortController | undefined;
  let inFlight: Promise<void> | undefined;
  /** The size of the last image delivered. */
  let lastSource: Size | undefined;
  const streak = badFrameStreak(failuresBeforeOffline);

  const setStatus = (next: SourceState, detail: Omit<StatusDetail, 'at'> = {}): void => {
    state = next;
    handlers?.status(next, { at: clock.now(), ...detail });
  };

  const poll = (): void => {
    timer = undefined;
    if (stopped) return;
    inFlight = pollOnce();
  };

  const pollOnce = async (): Promise<void> => {
    const began = clock.now();
    let result: Snapshot | Failure;
    try {
      result = await fetchFrame();
    } catch (error) {
      result = error as Failure;
    }
    if (stopped || handlers === undefined) return;
    if ('frame' in result) {
      streak.good();
      const change = sourceSizeChange(lastSource, result.source);
      lastSource = result.source;
      if (state !== 'online') {
        retry.reset();
        setStatus('online', { sourceSize: result.source, ...change });
      } else if (change !== undefined) {
        setStatus('online', change);
      }
      handlers.frame(result.frame, result.capturedAt, result.colour);
      next(began);
      return;
    }
    const { error, afterResponse } = result;
    if (state === 'online') {
      handlers.badFrame(error);
      const reason = streak.bad(error);
      if (reason === undefined) next(began);
      else goOffline(reason);
      return;
    }
    if (afterResponse) handlers.badFrame(error);
    streak.bad(error);
    goOffline(offlineReason(error));
  };

  const next = (began: number): void => {
    timer = clock.setTimeout(poll, Math.max(0, began + intervalMs - clock.now()));
  };

  const goOffline = (reason: string): void => {
    const { attempt, retryInMs } = retry.schedule(() => {
      if (stopped) return;
      setStatus('connecting', { attempt: retry.attempt + 1 });
      poll();
    });
    setStatus('offline', { reason, attempt, retryInMs });
  };

  /** One poll: a frame, or throws a {@link Failure}. */
  const fetchFrame = async (): Promise<Snapshot> => {
    const abort = new AbortController();
    controller = abort;
    const timeout = clock.setTimeout(
      () => abort.abort(new FrameError(name, `no complete response within timeoutMs (${timeoutMs} ms)`)),
      timeoutMs,
    );
    const fail = (reason: string, afterResponse: boolean, cause?: unknown): Failure => ({
      error: cause instanceof FrameError ? cause : new FrameError(name, reason, { cause }),
      afterResponse,
    });
    let bytes: Buffer;
    let capturedAt: number;
    try {
      let response: IncomingMessage;
      try {
        response = await httpGet(url, {
          username,
          password,
          agent,
          signal: abort.signal,
          headers: { accept: 'image/jpeg, image/*;q=0.9' },
          lookup,
        });
      } catch (error) {
        const reason = abort.signal.reason ?? error;
        throw fail(`request failed: ${requestFailure(reason, target.hostname)}`, false, reason);
      }
      capturedAt = clock.now();
      const status = response.statusCode ?? 0;
      if (status < 200 || status > 299) {
        response.destroy();
        throw fail(`HTTP ${status}${response.statusMessage ? ` ${response.statusMessage}` : ''}`, false);
      }
      const type = response.headers['content-type'];
      if (type !== undefined && !/^\s*(image\/|application\/octet-stream\b)/i.test(type)) {
        response.destroy();
        throw fail(`not an image: Content-Type ${type}`, true);
      }
      const declared = Number(response.headers['content-length']);
      if (Number.isFinite(declared) && declared > maxBytes) {
        response.destroy();
        throw fail(`response declares ${declared} bytes, more than maxBytes (${maxBytes})`, true);
      }
      const chunks: Buffer[] = [];
      let total = 0;
      try {
        for await (const chunk of response as AsyncIterable<Buffer>) {
          total += chunk.length;
          if (total > maxBytes) {
            response.destroy();
            throw fail(`response larger than maxBytes (${maxBytes})`, true);
          }
          chunks.push(chunk);
        }
      } catch (error) {
        if ((error as Failure).afterResponse !== undefined) throw error;
        const reason = abort.signal.reason ?? error;
        throw fail(`response cut off after ${total} bytes: ${requestFailure(reason)}`, true, reason);
      }
      if (!response.complete) throw fail(`response cut off after ${total} bytes`, true);
      if (total === 0) throw fail('empty response (0 bytes)', true);
      bytes = Buffer.concat(chunks, total);
    } finally {
      clock.clearTimeout(timeout);
      if (controller === abort) controller = undefined;
    }
    try {
      return { ...(await decodeLiveFrame(bytes, size, { name, limitInputPixels, colour })), capturedAt };
    } catch (error) {
      if (error instanceof FrameError) throw fail(error.message, true, error);
      throw error;
    }
  };

  return {
    id,
    start(given) {
      if (handlers !== undefined) throw new Error(`camera ${id}: start() was already called`);
      if (stopped) throw new Error(`camera ${id}: stopped`);
      handlers = given;
      setStatus('connecting', { attempt: 1 });
      poll();
    },
    async stop() {
      stopped = true;
      if (timer !== undefined) clock.clearTimeout(timer);
      timer = undefined;
      retry.cancel();
      controller?.abort(new Error('stopped'));
      try {
        await inFlight;
      } finally {
        agent.destroy();
      }
    },
  };
}
