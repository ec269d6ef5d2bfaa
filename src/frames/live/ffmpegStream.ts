/**
 * Anything ffmpeg reads (an RTSP camera, a video file, a V4L2 device such as /dev/video0) as a
 * live source, decoded by an ffmpeg child process into raw grey frames piped in memory.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { isAbsolute } from 'node:path';
import type { Readable } from 'node:stream';
import { FrameError } from '../FrameError.ts';
import { FFMPEG_NOT_FOUND } from '../readVideo.ts';
import { assertAspect, type Size } from '../workingSize.ts';
import { createRetryScheduler, type BackoffOptions } from './backoff.ts';
import { offlineReason } from './badFrameStreak.ts';
import type { CameraHandlers, CameraSource, SourceState, StatusDetail } from './cameraSource.ts';
import { checkSize, checkText, checkWhole } from './checkOptions.ts';
import { systemClock, type Clock } from './clock.ts';
import { CANNOT_RESOLVE, redactUrl } from './httpGet.ts';
import { sourceSizeChange } from './sourceSizeChange.ts';

export interface FfmpegStreamOptions {
  /** The camera id (for the caller; not sent anywhere). Required. */
  id: string;
  /** The working size ffmpeg scales every frame to (the model's), whole pixels ≥ 1. Required. */
  size: Size;
  /** Read the input at its own frame rate (ffmpeg `-re`), for a video file played as a camera. Default false. */
  realtime?: boolean;
  /** Play a video file over and over (ffmpeg `-stream_loop -1`); video files only. Default false. */
  loop?: boolean;
  /**
   * More ffmpeg input options, placed just before `-i` (e.g. `['-input_format', 'mjpeg',
   * '-video_size', '1280x720']` for a USB camera). Default none.
   */
  inputOptions?: readonly string[];
  /** No frame byte for this long (including at start) counts as a stall, milliseconds, a whole number ≥ 1. Default 30000. */
  stallMs?: number;
  /** The ffmpeg executable: a name looked up on PATH or a path. Default `'ffmpeg'`. */
  ffmpegPath?: string;
  /** Delays between restarts (see backoff.ts). Default: 1 s doubling up to 60 s, full jitter. */
  backoff?: BackoffOptions;
  /** Time source; tests only. Default the system clock. */
  clock?: Clock;
  /** Uniform random numbers in [0, 1) for the backoff jitter; tests only. Default Math.random. */
  random?: () => number;
}

/** What kind of input a string names, for the options ffmpeg needs. */
export const FfmpegInputKind = { rtsp: 'rtsp', device: 'device', url: 'url', file: 'file' } as const;
export type FfmpegInputKind = (typeof FfmpegInputKind)[keyof typeof FfmpegInputKind];

/** rtsp:// or rtsps:// → rtsp; /dev/video<N> → device (V4L2); another `scheme://` → url; anything else → file. */
export function ffmpegInputKind(input: string): FfmpegInputKind {
  if (/^rtsps?:\/\//i.test(input)) return 'rtsp';
  if (/^\/dev\/video\d+$/.test(input)) return 'device';
  if (/^[a-z][a-z0-9+.-]*:\/\//i.test(input)) return 'url';
  return 'file';
}

/** Most stderr kept from an ffmpeg run for messages, in characters (the end is kept). */
const STDERR_KEEP = 4000;
/** Milliseconds between SIGTERM (which lets ffmpeg close an RTSP session) and SIGKILL. */
const KILL_GRACE_MS = 2000;
/** Frames held while the source size is not known yet. */
const MAX_HELD_FRAMES = 8;
/** Longest stderr line looked at, characters (a longer one is cut there). */
const MAX_LINE = 2000;

/**
 * The frame size in a line of ffmpeg's showinfo filter at log level info with the level shown
 * (`[Parsed_showinfo_2 @ 0x…] [info] n:   0 pts: … fmt:yuvj420p sar:1/1 s:1280x960 i:P …`), or
 * undefined for any other line.
 */
export function showinfoSize(line: string): Size | undefined {
  const match = /^\[Parsed_showinfo_\d+ @ [^\]]*\] (?:\[info\] )?n:\s*\d+ .*?\bs:(\d+)x(\d+)\b/.exec(line);
  return match === null ? undefined : { width: Number(match[1]), height: Number(match[2]) };
}

/**
 * Runs, per connection,
 *
 *   ffmpeg -nostdin -hide_banner -nostats -loglevel level+info [-rtsp_transport tcp | -f v4l2] [-re] [-stream_loop -1]
 *          [inputOptions…] -i INPUT
 *          -map 0:v:0 -frames:v 1 -f image2pipe -c:v pgm -pix_fmt gray pipe:3
 *          -filter_complex [0:v:0]split=2[frames][sizes];[sizes]select='eq(n,0)',showinfo,nullsink;
 *                          [frames]scale=W:H:flags=area,format=gray[out]
 *          -map [out] -fps_mode passthrough -f rawvideo -pix_fmt gray pipe:1
 *
 * and cuts stdout into frames of exactly W × H bytes. The first output, the first frame as a PGM
 * image on a third pipe, gives the source size after ffmpeg's automatic rotation (its Netpbm
 * header "P5 width height 255"), so the aspect ratio is checked on the same connection, without
 * opening the camera twice: more than 1 % off (assertAspect) is a `badFrame` with assertAspect's
 * message, then `offline` (reason `wrong aspect ratio: …`) and a restart after backoff.
 * `-fps_mode passthrough` gives each decoded picture once (no duplicated frames).
 * `capturedAt` is when a frame's last byte arrived.
 *
 * When the input's frame size changes mid-stream (a camera switched resolution), ffmpeg builds
 * its filter graph anew, and keeps the outputs at their first size. The `select` of the graph's
 * first frame (its frame counter `n` starts again at 0 in the new graph) and `showinfo` log one
 * line per graph with the new size (`s:WxH`, {@link showinfoSize}), read from stderr: the same
 * aspect ratio is reported as `online` again with `sourceSize` and `previousSourceSize` (see
 * cameraSource.ts; told as soon as ffmpeg logs it, which may be a frame or two after the first
 * frame of the new size reached stdout, the two being separate pipes) and the frames go on;
 * another aspect ratio ends the run as above. The size is also compared with the last run's, so
 * a camera that restarts its stream at another size is reported too. Of stderr only the lines at
 * level error and above are kept for messages.
 *
 * `-rtsp_transport tcp` is added for rtsp:// inputs (unless inputOptions set it), `-f v4l2` for
 * /dev/videoN; a relative file path is passed as ./path so ffmpeg never takes it for a protocol.
 *
 * `online` comes with the first frame (and resets the backoff). ffmpeg exiting — with an error,
 * or at the end of a file played without `loop` (which then plays again after the backoff delay) —
 * or no frame byte for `stallMs` makes the source `offline` and restarts ffmpeg after an
 * exponential-backoff delay; a missing ffmpeg is reported as such (`ffmpeg not found: …`) and
 * retried the same way, and so is a host name that does not resolve (`cannot resolve host <name>
 * (…)`, from ffmpeg's "Failed to resolve hostname" message). stop() sends SIGTERM, then SIGKILL
 * after 2 s, and resolves once the process has exited and been reaped (no zombie is left).
 *
 * RTSP URLs appear in messages without credentials (see redactUrl).
 */
export function ffmpegStream(input: string, options: FfmpegStreamOptions): CameraSource {
  const {
    id,
    size,
    realtime = false,
    loop = false,
    inputOptions = [],
    stallMs = 30_000,
    ffmpegPath = 'ffmpeg',
    backoff = {},
    clock = systemClock,
    random = Math.random,
  } = options;
  checkText(id, 'id');
  checkSize(size);
  checkText(input, 'input');
  checkWhole(stallMs, 'stallMs', 1);
  checkText(ffmpegPath, 'ffmpegPath');
  if (typeof realtime !== 'boolean') throw new TypeError('realtime must be true or false');
  if (typeof loop !== 'boolean') throw new TypeError('loop must be true or false');
  if (!(Array.isArray(inputOptions) && inputOptions.every((option) => typeof option === 'string'))) {
    throw new TypeError('inputOptions must be an array of strings');
  }
  const kind = ffmpegInputKind(input);
  if (loop && kind !== 'file') throw new RangeError(`loop applies to a video file only, not to ${kind} input ${redact(input)}`);
  const name = redact(input);
  const args = [
    '-nostdin', '-hide_banner', '-nostats', '-loglevel', 'level+info',
    ...(kind === 'rtsp' && !inputOptions.includes('-rtsp_transport') ? ['-rtsp_transport', 'tcp'] : []),
    ...(kind === 'device' && !inputOptions.includes('-f') ? ['-f', 'v4l2'] : []),
    ...(realtime ? ['-re'] : []),
    ...(loop ? ['-stream_loop', '-1'] : []),
    ...inputOptions,
    '-i', kind === 'file' && !isAbsolute(input) ? `./${input}` : input,
    '-map', '0:v:0', '-frames:v', '1', '-f', 'image2pipe', '-c:v', 'pgm', '-pix_fmt', 'gray', 'pipe:3',
    '-filter_complex',
    `[0:v:0]split=2[frames][sizes];[sizes]select='eq(n,0)',showinfo,nullsink;[frames]scale=${size.width}:${size.height}:flags=area,format=gray[out]`,
    '-map', '[out]', '-fps_mode', 'passthrough', '-f', 'rawvideo', '-pix_fmt', 'gray', 'pipe:1',
  ];
  const frameBytes = size.width * size.height;
  const retry = createRetryScheduler({ ...backoff, clock, random });

  let handlers: CameraHandlers | undefined;
  let stopped = false;
  let state: SourceState | undefined;
  let child: ChildProcess | undefined;
  let exited: Promise<void> | undefined;
  /** The input's frame size last known, over all runs. */
  let lastSource: Size | undefined;

  const setStatus = (next: SourceState, detail: Omit<StatusDetail, 'at'> = {}): void => {
    state = next;
    handlers?.status(next, { at: clock.now(), ...detail });
  };

  const connect = (): void => {
    if (stopped) return;
    setStatus('connecting', { attempt: retry.attempt + 1 });
    run();
  };

  /** One ffmpeg process, from spawn to reaping; then offline and a restart unless stopped. */
  const run = (): void => {
    const ffmpeg = spawn(ffmpegPath, args, { stdio: ['ignore', 'pipe', 'pipe', 'pipe'] });
    child = ffmpeg;
    const stdout = ffmpeg.stdout as Readable;
    const sizePipe = ffmpeg.stdio[3] as Readable;
    let stderr = ''; // the lines at level error and above
    let partial = ''; // a stderr line not complete yet
    let current: Size | undefined; // the input's frame size now, from the PGM header or showinfo
    let reason: string | undefined; // why we ended it, when we did
    let stallTimer: unknown;
    let killTimer: NodeJS.Timeout | undefined;
    let source: Size | undefined; // from the PGM header
    let header = '';
    const held: { frame: Float32Array; capturedAt: number }[] = [];
    let data = new Float32Array(frameBytes);
    let filled = 0;

    const end = (why: string): void => {
      reason ??= why;
      if (ffmpeg.exitCode !== null || ffmpeg.signalCode !== null) return;
      ffmpeg.kill('SIGTERM');
      // A real timer, whatever the clock: the process must go even if a test clock stands still.
      killTimer ??= setTimeout(() => ffmpeg.kill('SIGKILL'), KILL_GRACE_MS);
    };
    const armStall = (): void => {
      if (stallTimer !== undefined) clock.clearTimeout(stallTimer);
      stallTimer = clock.setTimeout(() => end(new FrameError(name, `stalled: no frame data for stallMs (${stallMs} ms)`).message), stallMs);
    };
    const deliver = (frame: Float32Array, capturedAt: number): void => {
      if (stopped || reason !== undefined || handlers === undefined) return;
      if (state !== 'online') {
        retry.reset();
        const change = current === undefined ? undefined : sourceSizeChange(lastSource, current);
        if (current !== undefined) lastSource = current;
        setStatus('online', { ...(current !== undefined && { sourceSize: current }), ...change });
      }
      handlers.frame({ width: size.width, height: size.height, data: frame }, capturedAt);
    };
    /** The input's frame size is (now) `next`: checks its aspect ratio; returns false when the run ends for it. */
    const sourceIs = (next: Size): boolean => {
      if (reason !== undefined) return false;
      if (current !== undefined && current.width === next.width && current.height === next.height) return true;
      try {
        assertAspect(size, next);
      } catch (error) {
        const bad = new FrameError(name, (error as Error).message);
        if (!stopped) handlers?.badFrame(bad);
        end(offlineReason(bad));
        return false;
      }
      current = next;
      // While online the change is told now; otherwise with the coming `online`.
      if (state === 'online' && !stopped) {
        const change = sourceSizeChange(lastSource, next);
        lastSource = next;
        if (change !== undefined) setStatus('online', change);
      }
      return true;
    };
    const stderrLine = (line: string): void => {
      const shown = showinfoSize(line);
      if (shown !== undefined) {
        sourceIs(shown);
        return;
      }
      const level = /\[(error|fatal|panic)\] /.exec(line);
      if (level !== null) stderr = (stderr + line.slice(0, level.index) + line.slice(level.index + level[0].length) + '\n').slice(-STDERR_KEEP);
    };

    armStall();
    ffmpeg.stderr?.setEncoding('utf8');
    ffmpeg.stderr?.on('data', (text: string) => {
      const lines = (partial + text).split(/\r?\n/);
      partial = (lines.pop() ?? '').slice(0, MAX_LINE);
      for (const line of lines) stderrLine(line.slice(0, MAX_LINE));
    });
    sizePipe.on('data', (chunk: Buffer) => {
      if (source !== undefined || reason !== undefined) return; // the rest of the PGM is drained and dropped
      header += chunk.subarray(0, 64 - header.length).toString('latin1');
      // Netpbm header: magic, whitespace, width, whitespace, height, whitespace, maxval, one whitespace.
      const match = /^P5\s+(\d+)\s+(\d+)\s+(\d+)\s/.exec(header);
      if (match === null) {
        if (header.length >= 64 || !'P5'.startsWith(header.slice(0, 2))) end(new FrameError(name, "cannot read the frame size from ffmpeg's output").message);
        return;
      }
      const first = { width: Number(match[1]), height: Number(match[2]) };
      if (!sourceIs(first)) return;
      source = first;
      for (const frame of held.splice(0)) deliver(frame.frame, frame.capturedAt);
    });
    sizePipe.on('error', () => {}); // a broken pipe at exit is expected
    stdout.on('data', (chunk: Buffer) => {
      armStall();
      let offset = 0;
      while (offset < chunk.length) {
        const take = Math.min(frameBytes - filled, chunk.length - offset);
        data.set(chunk.subarray(offset, offset + take), filled);
        filled += take;
        offset += take;
        if (filled === frameBytes) {
          const frame = data;
          data = new Float32Array(frameBytes);
          filled = 0;
          if (source !== undefined) deliver(frame, clock.now());
          else {
            held.push({ frame, capturedAt: clock.now() });
            if (held.length > MAX_HELD_FRAMES) held.shift();
          }
        }
      }
    });
    stdout.on('error', () => {});

    exited = new Promise<void>((resolve) => {
      let spawnError: Error | undefined;
      ffmpeg.once('error', (error) => {
        spawnError = error;
        // A spawn failure emits no 'close' on older Nodes when no stdio was opened; settle here too.
        if (ffmpeg.pid === undefined) finish(null, null);
      });
      let finished = false;
      const finish = (code: number | null, signal: NodeJS.Signals | null): void => {
        if (finished) return;
        finished = true;
        if (stallTimer !== undefined) clock.clearTimeout(stallTimer);
        if (killTimer !== undefined) clearTimeout(killTimer);
        if (child === ffmpeg) child = undefined;
        resolve();
        if (stopped) return;
        // A last line without its newline can only be an error message here (showinfo lines end with one).
        if (partial !== '' && showinfoSize(partial) === undefined) stderrLine(partial);
        partial = '';
        let why = reason;
        const unresolved = /Failed to resolve hostname (\S+?):? (.*)$/m.exec(stderr);
        if (why === undefined && unresolved !== null) {
          why = new FrameError(name, `${CANNOT_RESOLVE} ${unresolved[1]} (${unresolved[2].trim()})`).message;
        }
        if (why === undefined) {
          if (spawnError !== undefined) {
            const errno = (spawnError as NodeJS.ErrnoException).code;
            why = errno === 'ENOENT' ? `${FFMPEG_NOT_FOUND} (tried '${ffmpegPath}')` : new FrameError(name, `cannot run ffmpeg '${ffmpegPath}' (${spawnError.message})`).message;
          } else if (code === 0) {
            why = new FrameError(name, 'the input ended').message;
          } else {
            const how = code !== null ? `exited with code ${code}` : `was killed by ${signal}`;
            const last = stderr.trim().split('\n').slice(-3).join(' | ');
            why = new FrameError(name, `ffmpeg ${how}${last === '' ? '' : `: ${last}`}`).message;
          }
        }
        const { attempt, retryInMs } = retry.schedule(connect);
        setStatus('offline', { reason: why, attempt, retryInMs });
      };
      ffmpeg.once('close', finish);
    });
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
      const running = child;
      if (running !== undefined && running.exitCode === null && running.signalCode === null && running.pid !== undefined) {
        running.kill('SIGTERM');
        const kill = setTimeout(() => running.kill('SIGKILL'), KILL_GRACE_MS);
        await exited;
        clearTimeout(kill);
      }
      await exited;
    },
  };
}

/** An input as it may appear in messages: URLs without credentials or query values. */
function redact(input: string): string {
  return /^[a-z][a-z0-9+.-]*:\/\//i.test(input) ? redactUrl(input) : input;
}
