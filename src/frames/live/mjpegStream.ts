/**
 * An MJPEG stream over HTTP (`multipart/x-mixed-replace`, RFC 2046 §5.1 syntax) as a live source.
 */
import type { IncomingMessage } from 'node:http';
import type { LookupFunction } from 'node:net';
import { FrameError } from '../FrameError.ts';
import type { Size } from '../workingSize.ts';
import { createRetryScheduler, type BackoffOptions } from './backoff.ts';
import { badFrameStreak } from './badFrameStreak.ts';
import type { CameraHandlers, CameraSource, SourceState, StatusDetail } from './cameraSource.ts';
import { checkSize, checkText, checkWhole } from './checkOptions.ts';
import { systemClock, type Clock } from './clock.ts';
import { decodeLiveFrame } from './decodeLiveFrame.ts';
import { checkCameraUrl, httpGet, redactUrl, requestFailure } from './httpGet.ts';
import { multipartBoundary, parseMultipart, type MultipartEvent } from './parseMultipart.ts';
import { sourceSizeChange } from './sourceSizeChange.ts';

export interface MjpegStreamOptions {
  /** The camera id (for the caller; not sent anywhere). Required. */
  id: string;
  /** The working size every frame is resized to (the model's), whole pixels ≥ 1. Required. */
  size: Size;
  /** User name for HTTP Basic authentication. Default: the URL's, if any; else none. */
  username?: string;
  /** Password for HTTP Basic authentication. Default: the URL's, if any; else empty. */
  password?: string;
  /** No byte for this long (or no response for this long after connecting) counts as a stall, milliseconds, a whole number ≥ 1. Default 30000. */
  stallMs?: number;
  /** Longest part (one JPEG) kept, bytes (inclusive), a whole number ≥ 1; longer ones are dropped as bad frames. Default 20 MiB. */
  maxPartBytes?: number;
  /** Bad frames in a row after which the stream is dropped and the source goes offline, a whole number ≥ 1. Default 5. */
  badFramesBeforeOffline?: number;
  /** Delays between reconnections (see backoff.ts). Default: 1 s doubling up to 60 s, full jitter. */
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

/**
 * Reads the MJPEG stream at `url` (http: or https:): one long GET whose body is cut into JPEGs by
 * {@link parseMultipart} as the bytes arrive (the boundary from the response's Content-Type,
 * if it has one), each decoded to a grey frame at `size`; `capturedAt` is when the part's last
 * byte arrived.
 *
 * Decoding runs one part at a time; when parts arrive faster than they decode, only the newest
 * waiting part is kept (a live source shows the present: the older ones are skipped, not
 * reported). Frames that arrived before a disconnection are delivered before the `offline` report. A part that does not decode, or is dropped by the parser (too large, cut off), is a
 * `badFrame`; after `badFramesBeforeOffline` in a row the stream is closed (reason
 * `N bad frames in a row, the last: …`, or `wrong aspect ratio: …`).
 *
 * The source is `online` from the first good frame of a connection on (which resets the
 * backoff). It goes `offline`, and reconnects after an exponential-backoff delay, when the
 * request fails, the status is not 2xx, the response is not multipart (`not an MJPEG stream:
 * Content-Type …`), no byte arrives for `stallMs` (`stalled: …`), the stream ends or breaks, or
 * too many bad frames come in a row. A host name that does not resolve is `request failed:
 * cannot resolve host <name> (<code>)`, retried like any failed connection.
 *
 * Every `online` status carries the JPEGs' own size (`sourceSize`); when it changes with the
 * same aspect ratio (mid-stream or from one connection to the next), `online` is reported again
 * before the first frame of the new size (see cameraSource.ts), and the frames keep coming.
 */
export function mjpegStream(url: string, options: MjpegStreamOptions): CameraSource {
  const {
    id,
    size,
    username,
    password,
    stallMs = 30_000,
    maxPartBytes = 20 * 1024 * 1024,
    badFramesBeforeOffline = 5,
    backoff = {},
    limitInputPixels,
    colour = false,
    clock = systemClock,
    random = Math.random,
    lookup,
  } = options;
  checkText(id, 'id');
  checkSize(size);
  checkWhole(stallMs, 'stallMs', 1);
  checkWhole(maxPartBytes, 'maxPartBytes', 1);
  checkWhole(badFramesBeforeOffline, 'badFramesBeforeOffline', 1);
  if (lookup !== undefined && typeof lookup !== 'function') throw new TypeError('lookup must be a function like dns.lookup');
  const host = checkCameraUrl(url, username, password).hostname;
  const name = redactUrl(url);
  const retry = createRetryScheduler({ ...backoff, clock, random });
  const streak = badFrameStreak(badFramesBeforeOffline);

  let handlers: CameraHandlers | undefined;
  let stopped = false;
  let state: SourceState | undefined;
  /** Counts connections; decodes of an older one are not delivered. */
  let generation = 0;
  let abort: AbortController | undefined;
  let stallTimer: unknown;
  let reading: Promise<void> | undefined;
  let decoding: Promise<void> | undefined;
  let waiting: { body: Uint8Array; capturedAt: number; generation: number } | undefined;
  /** The size of the last JPEG delivered, over all connections. */
  let lastSource: Size | undefined;

  const setStatus = (next: SourceState, detail: Omit<StatusDetail, 'at'> = {}): void => {
    state = next;
    handlers?.status(next, { at: clock.now(), ...detail });
  };

  /** Closes the current connection, `reason` being the offline reason (the for-await loop then ends). */
  const drop = (connection: AbortController, reason: string): void => {
    if (connection.signal.aborted) return;
    waiting = undefined; // parts of a connection we give up on are not decoded
    connection.abort(new Closed(reason));
  };

  const armStall = (connection: AbortController): void => {
    if (stallTimer !== undefined) clock.clearTimeout(stallTimer);
    stallTimer = clock.setTimeout(() => drop(connection, new FrameError(name, `stalled: no data for stallMs (${stallMs} ms)`).message), stallMs);
  };

  const connect = (): void => {
    if (stopped) return;
    generation++;
    setStatus('connecting', { attempt: retry.attempt + 1 });
    reading = read(generation);
  };

  const read = async (mine: number): Promise<void> => {
    const connection = new AbortController();
    abort = connection;
    armStall(connection);
    let reason: string;
    try {
      reason = await readStream(connection, mine);
    } catch (error) {
      const cause = connection.signal.reason ?? error;
      reason =
        cause instanceof Closed || cause instanceof FrameError
          ? cause.message
          : new FrameError(name, `connection lost: ${requestFailure(cause, host)}`).message;
    } finally {
      if (stallTimer !== undefined) clock.clearTimeout(stallTimer);
      stallTimer = undefined;
      connection.abort(new Error('closed'));
      if (abort === connection) abort = undefined;
    }
    // Frames that arrived before the end are still delivered, before the offline report.
    await decoding;
    if (stopped) return;
    generation++; // nothing of the closed connection is delivered from now on
    streak.good();
    const { attempt, retryInMs } = retry.schedule(connect);
    setStatus('offline', { reason, attempt, retryInMs });
  };

  /** Reads one connection until it ends; returns why it ended (or throws the stream's error). */
  const readStream = async (connection: AbortController, mine: number): Promise<string> => {
    let response: IncomingMessage;
    try {
      response = await httpGet(url, {
        username,
        password,
        signal: connection.signal,
        headers: { accept: 'multipart/x-mixed-replace, multipart/*;q=0.9' },
        lookup,
      });
    } catch (error) {
      const cause = connection.signal.reason ?? error;
      if (cause instanceof Closed) throw cause;
      throw new FrameError(name, `request failed: ${requestFailure(cause, host)}`, { cause });
    }
    const status = response.statusCode ?? 0;
    if (status < 200 || status > 299) {
      response.destroy();
      return new FrameError(name, `HTTP ${status}${response.statusMessage ? ` ${response.statusMessage}` : ''}`).message;
    }
    const type = response.headers['content-type'] ?? '';
    if (!/^\s*multipart\//i.test(type)) {
      response.destroy();
      return new FrameError(name, `not an MJPEG stream: Content-Type ${type === '' ? '(none)' : type}`).message;
    }
    const parser = parseMultipart({ boundary: multipartBoundary(type), maxPartBytes });
    for await (const chunk of response as AsyncIterable<Buffer>) {
      armStall(connection);
      for (const event of parser.feed(chunk)) take(event, mine, connection);
      if (connection.signal.aborted) break;
    }
    if (connection.signal.aborted) {
      const cause = connection.signal.reason;
      return cause instanceof Error ? cause.message : String(cause);
    }
    for (const event of parser.end()) take(event, mine, connection);
    return new FrameError(name, 'the stream ended').message;
  };

  /** A parser event: a part waits for the decoder (replacing an older waiting one); a dropped part is a bad frame. */
  const take = (event: MultipartEvent, mine: number, connection: AbortController): void => {
    if (event.type === 'dropped') {
      bad(new FrameError(name, `part dropped: ${event.reason}`), mine, connection);
      return;
    }
    waiting = { body: event.body, capturedAt: clock.now(), generation: mine };
    decoding ??= decodeWaiting(connection).finally(() => {
      decoding = undefined;
    });
  };

  const bad = (error: FrameError, mine: number, connection: AbortController): void => {
    if (stopped || mine !== generation || handlers === undefined) return;
    handlers.badFrame(error);
    const reason = streak.bad(error);
    if (reason !== undefined) drop(connection, reason);
  };

  const decodeWaiting = async (connection: AbortController): Promise<void> => {
    while (waiting !== undefined && !stopped) {
      const part = waiting;
      waiting = undefined;
      let decoded;
      try {
        decoded = await decodeLiveFrame(part.body, size, { name, limitInputPixels, colour });
      } catch (error) {
        if (!(error instanceof FrameError)) throw error;
        bad(error, part.generation, abort ?? connection);
        continue;
      }
      if (stopped || part.generation !== generation || handlers === undefined) continue;
      streak.good();
      const change = sourceSizeChange(lastSource, decoded.source);
      lastSource = decoded.source;
      if (state !== 'online') {
        retry.reset();
        setStatus('online', { sourceSize: decoded.source, ...change });
      } else if (change !== undefined) {
        setStatus('online', change);
      }
      handlers.frame(decoded.frame, part.capturedAt, decoded.colour);
    }
  };

  return {
    id,
    start(given) {
      if (handlers !== undefined) throw new Error(`camera ${id}: start() was already called`);
      if (stopped) throw new Error(`camera ${id}: stopped`);
      handlers = given;
      connect();
    },
    async stop() {
      stopped = true;
      retry.cancel();
      if (stallTimer !== undefined) clock.clearTimeout(stallTimer);
      stallTimer = undefined;
      abort?.abort(new Error('stopped'));
      waiting = undefined;
      await reading;
      await decoding;
    },
  };
}

/** Why we closed a connection ourselves: its message is the offline reason. */
class Closed extends Error {}
