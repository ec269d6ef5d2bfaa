import { spawn, type ChildProcessByStdio } from 'node:child_process';
import type { Readable } from 'node:stream';
import type { FrameItem } from '../domain/frame.ts';
import { FrameError } from './FrameError.ts';
import { frameSourceOptions, type FrameSourceOptions } from './frameSourceOptions.ts';
import { assertAspect, workingSize, type Size } from './workingSize.ts';

export interface ReadVideoOptions extends FrameSourceOptions {
  /** The ffmpeg executable: a name looked up on PATH or a path. Default `'ffmpeg'`. */
  ffmpegPath?: string;
  /**
   * Which frames: `'pictures'` (default) gives each decoded picture once; `'constant-rate'` gives
   * the video's constant-rate timeline, repeating a picture for as long as the container shows it
   * (ffmpeg `-fps_mode cfr`), so frame n is the picture on screen at n / frame rate.
   */
  timing?: 'pictures' | 'constant-rate';
}

/** The message when the ffmpeg executable cannot be found. */
export const FFMPEG_NOT_FOUND = 'ffmpeg not found: install it (Debian: apt-get install ffmpeg) or pass --ffmpeg';

/** Most stderr kept from an ffmpeg run for error messages, in characters (the end is kept). */
const STDERR_KEEP = 4000;

/**
 * The frames of a video (any file or URL ffmpeg reads) as grey frames at the working size, decoded
 * by an ffmpeg child process and piped in memory; nothing is written to disk.
 *
 * First the source size is found by decoding the first frame of the first video stream into a
 * PGM image on a pipe and reading its Netpbm header ("P5 width height 255"): this is the size
 * after ffmpeg's automatic rotation, i.e. what the scale filter sees. The working size is then
 * `width` × `height` when both are given (the model's size; a source whose aspect ratio is more
 * than 1 % off is an error), else workingSize from `width` or `longSide`. Then
 *
 *   ffmpeg -nostdin -v error -i FILE -map 0:v:0 -vf [select=not(mod(n\,N)),]scale=W:H:flags=area,format=gray
 *          -fps_mode passthrough [-frames:v LIMIT] -f rawvideo -pix_fmt gray pipe:1
 *
 * streams W·H bytes per frame, which are cut into frames as they arrive (bytes are copied once,
 * straight into each frame's Float32Array). `-fps_mode passthrough` gives each decoded picture
 * once: no frames are duplicated or dropped to fill a constant frame rate, so a file whose
 * container declares repeated ("drop") frames yields only its distinct pictures. Frames are
 * named by their 0-based index among the decoded pictures ("0", "1", …; with `every` = 3:
 * "0", "3", "6", …).
 *
 * Stopping early (break, return, `limit` reached, `signal` aborted) kills ffmpeg and waits
 * for it to exit, so no process is left behind.
 *
 * @throws Error with {@link FFMPEG_NOT_FOUND} when ffmpeg cannot be found; FrameError naming
 *   `file` when ffmpeg fails (with its stderr), the video has no frame, or its aspect ratio does
 *   not match `width` × `height`; the signal's reason when `signal` aborts.
 */
export async function* readVideo(file: string, options: ReadVideoOptions = {}): AsyncGenerator<FrameItem> {
  const { width, height, longSide, every, limit, signal } = frameSourceOptions(options);
  const { ffmpegPath = 'ffmpeg', timing = 'pictures' } = options;
  if (timing !== 'pictures' && timing !== 'constant-rate') throw new RangeError(`timing must be 'pictures' or 'constant-rate', got ${String(timing)}`);
  if (typeof ffmpegPath !== 'string' || ffmpegPath === '') throw new TypeError('ffmpegPath must be a non-empty string');
  signal?.throwIfAborted();

  const source = await probeSize(file, ffmpegPath, signal);
  let size: Size;
  if (width !== undefined && height !== undefined) {
    size = { width, height };
    try {
      assertAspect(size, source);
    } catch (error) {
      throw new FrameError(file, (error as Error).message);
    }
  } else {
    size = workingSize(source.width, source.height, { width, longSide });
  }

  const filters = [
    ...(every > 1 ? [`select=not(mod(n\\,${every}))`] : []),
    `scale=${size.width}:${size.height}:flags=area`,
    'format=gray',
  ].join(',');
  const args = [
    '-nostdin', '-v', 'error', '-i', file, '-map', '0:v:0', '-vf', filters, '-fps_mode', timing === 'pictures' ? 'passthrough' : 'cfr',
    ...(Number.isFinite(limit) ? ['-frames:v', String(limit)] : []),
    '-f', 'rawvideo', '-pix_fmt', 'gray', 'pipe:1',
  ];
  const run = startFfmpeg(ffmpegPath, args, signal);
  const frameBytes = size.width * size.height;
  let data = new Float32Array(frameBytes);
  let filled = 0;
  let count = 0;
  try {
    for await (const chunk of run.child.stdout as AsyncIterable<Buffer>) {
      let offset = 0;
      while (offset < chunk.length) {
        const take = Math.min(frameBytes - filled, chunk.length - offset);
        data.set(chunk.subarray(offset, offset + take), filled);
        filled += take;
        offset += take;
        if (filled === frameBytes) {
          signal?.throwIfAborted(); // also after an abort while the consumer held the last frame
          const frame = { width: size.width, height: size.height, data };
          data = new Float32Array(frameBytes);
          filled = 0;
          yield { name: String(count * every), frame };
          count++;
          if (count >= limit) return;
        }
      }
    }
    const failure = await run.failure(file);
    if (failure) throw new FrameError(file, failure);
    if (filled !== 0) {
      throw new FrameError(file, `ffmpeg output ended inside a frame (${filled} of ${frameBytes} bytes)`);
    }
  } finally {
    await run.stop();
  }
}

/** Width and height of the first video frame, from ffmpeg's PGM output of that frame. */
async function probeSize(file: string, ffmpegPath: string, signal: AbortSignal | undefined): Promise<Size> {
  const args = [
    '-nostdin', '-v', 'error', '-i', file, '-map', '0:v:0', '-frames:v', '1',
    '-f', 'image2pipe', '-c:v', 'pgm', '-pix_fmt', 'gray', 'pipe:1',
  ];
  const run = startFfmpeg(ffmpegPath, args, signal);
  try {
    let head = '';
    for await (const chunk of run.child.stdout as AsyncIterable<Buffer>) {
      head += chunk.subarray(0, 64 - head.length).toString('latin1');
      // Netpbm header: magic, whitespace, width, whitespace, height, whitespace, maxval, one whitespace.
      const match = /^P5\s+(\d+)\s+(\d+)\s+(\d+)\s/.exec(head);
      if (match) return { width: Number(match[1]), height: Number(match[2]) };
      if (head.length >= 64) throw new FrameError(file, `cannot read the frame size from ffmpeg's output`);
    }
    const failure = await run.failure(file);
    if (failure) throw new FrameError(file, failure);
    throw new FrameError(file, `no video frame could be decoded${run.stderr() ? `: ${run.stderr()}` : ''}`);
  } finally {
    await run.stop();
  }
}

interface FfmpegRun {
  readonly child: ChildProcessByStdio<null, Readable, Readable>;
  /**
   * Waits for ffmpeg to exit: undefined when it succeeded, else why it failed (exit code or
   * signal, and its stderr). Throws for a missing ffmpeg, one that cannot run, or an abort.
   */
  failure(file: string): Promise<string | undefined>;
  /** The end of what ffmpeg wrote to stderr, trimmed. */
  stderr(): string;
  /** Kills ffmpeg if it still runs and waits until it has exited. Never throws. */
  stop(): Promise<void>;
}

function startFfmpeg(ffmpegPath: string, args: string[], signal: AbortSignal | undefined): FfmpegRun {
  const child = spawn(ffmpegPath, args, { stdio: ['ignore', 'pipe', 'pipe'], signal, killSignal: 'SIGKILL' });
  let stderr = '';
  child.stderr.setEncoding('utf8');
  child.stderr.on('data', (text: string) => {
    stderr = (stderr + text).slice(-STDERR_KEEP);
  });
  // Settles once: with the exit code or signal, or with the spawn/abort error.
  const settled = new Promise<{ code: number | null; killedBy: NodeJS.Signals | null; error?: Error }>((resolve) => {
    child.once('error', (error) => resolve({ code: null, killedBy: null, error }));
    child.once('close', (code, killedBy) => resolve({ code, killedBy }));
  });
  return {
    child,
    async failure(file) {
      const { code, killedBy, error } = await settled;
      if (signal?.aborted) throw signal.reason;
      if (error) {
        const errno = (error as NodeJS.ErrnoException).code;
        if (errno === 'ENOENT') throw new Error(`${FFMPEG_NOT_FOUND} (tried '${ffmpegPath}')`, { cause: error });
        throw new FrameError(file, `cannot run ffmpeg '${ffmpegPath}' (${error.message})`, { cause: error });
      }
      if (code === 0) return undefined;
      const how = code !== null ? `exited with code ${code}` : `was killed by ${killedBy}`;
      return `ffmpeg ${how}: ${stderr.trim() || '(no message)'}`;
    },
    stderr: () => stderr.trim(),
    async stop() {
      if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL');
      child.stdout.destroy();
      await settled;
      // 'close' comes after 'exit': the process has been reaped by now.
    },
  };
}
