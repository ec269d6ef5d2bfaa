/**
 * The live source of one configured camera, from its (already validated) description.
 */
import type { LookupFunction } from 'node:net';
import { createScene, type SceneId } from '../synthetic/index.ts';
import { createShadowRoom } from '../synthetic/shadowRoom.ts';
import type { Size } from '../workingSize.ts';
import type { BackoffOptions } from './backoff.ts';
import type { CameraSource } from './cameraSource.ts';
import { checkSize, checkText } from './checkOptions.ts';
import type { Clock } from './clock.ts';
import { dropFolder, type AfterRead } from './dropFolder.ts';
import { ffmpegStream } from './ffmpegStream.ts';
import { mjpegStream } from './mjpegStream.ts';
import { snapshotPoller } from './snapshotPoller.ts';
import { syntheticCamera } from './syntheticCamera.ts';

/** Kinds of live source. */
export const CameraSourceKind = {
  dropFolder: 'drop-folder',
  snapshot: 'snapshot',
  mjpeg: 'mjpeg',
  ffmpeg: 'ffmpeg',
  synthetic: 'synthetic',
} as const;
export type CameraSourceKind = (typeof CameraSourceKind)[keyof typeof CameraSourceKind];

/** What every camera description has. */
export interface CameraSourceCommon {
  /** The camera id, a non-empty string. */
  id: string;
  /** The working size (the model's), whole pixels ≥ 1; every frame is delivered at exactly this size. */
  size: Size;
  /** Reconnection delays (HTTP and ffmpeg sources). Default: 1 s doubling up to 60 s, full jitter. */
  backoff?: BackoffOptions;
  /**
   * Deliver every frame in colour too, for the colour mode (shadows). Image sources (drop folder,
   * snapshot, MJPEG) and the synthetic shadow room; not ffmpeg, which delivers grey. Default false.
   */
  colour?: boolean;
}

/** A folder cameras upload snapshots into. */
export interface DropFolderSourceDescription extends CameraSourceCommon {
  kind: 'drop-folder';
  /** The folder. */
  path: string;
  /** 'delete' (default: each image is deleted once read, so that no picture of people stays) or 'keep'. */
  afterRead?: AfterRead;
  /** Milliseconds between scans of the folder, a whole number ≥ 1. Default 2000. */
  scanIntervalMs?: number;
  /** Milliseconds a file's size must stay unchanged before it is read, a whole number ≥ 0. Default 1000. */
  settleMs?: number;
}

/** A snapshot URL polled. */
export interface SnapshotSourceDescription extends CameraSourceCommon {
  kind: 'snapshot';
  /** http: or https: URL of one image. */
  url: string;
  /** Milliseconds between the starts of two polls, a whole number ≥ 1. Default 1000. */
  intervalMs?: number;
  /** User name for HTTP Basic authentication. Default none. */
  username?: string;
  /** Password for HTTP Basic authentication. Default empty. */
  password?: string;
  /** Milliseconds a poll may take in all, a whole number ≥ 1. Default 10000. */
  timeoutMs?: number;
}

/** An MJPEG stream over HTTP. */
export interface MjpegSourceDescription extends CameraSourceCommon {
  kind: 'mjpeg';
  /** http: or https: URL of the multipart/x-mixed-replace stream. */
  url: string;
  /** User name for HTTP Basic authentication. Default none. */
  username?: string;
  /** Password for HTTP Basic authentication. Default empty. */
  password?: string;
  /** Milliseconds without data after which the stream is reconnected, a whole number ≥ 1. Default 30000. */
  stallMs?: number;
}

/** Anything ffmpeg reads: rtsp:// URL, video file, /dev/videoN. */
export interface FfmpegSourceDescription extends CameraSourceCommon {
  kind: 'ffmpeg';
  /** What ffmpeg reads (its -i). */
  input: string;
  /** Play at the input's own frame rate (-re), for a video file played as a camera. Default false. */
  realtime?: boolean;
  /** Play a video file over and over (-stream_loop -1); video files only. Default false. */
  loop?: boolean;
  /** More ffmpeg input options, placed before -i. Default none. */
  options?: string[];
  /** Milliseconds without frame data after which ffmpeg is restarted, a whole number ≥ 1. Default 30000. */
  stallMs?: number;
}

/** A synthetic scene played live (demo). */
export interface SyntheticSourceDescription extends CameraSourceCommon {
  kind: 'synthetic';
  /** The scene id: 'reading-room', 'stock-room', or 'shadow-room' (the reading room in colour, with shadows). */
  scene: SceneId | 'shadow-room';
  /** Scene seconds per wall-clock second, > 0 and ≤ 1000. Default 1. */
  speed?: number;
  /** The scene's seed, a whole number. Default 1. */
  seed?: number;
}

/** One camera's source description, as validated from the configuration. */
export type CameraSourceDescription =
  | DropFolderSourceDescription
  | SnapshotSourceDescription
  | MjpegSourceDescription
  | FfmpegSourceDescription
  | SyntheticSourceDescription;

export interface CreateCameraSourceOptions {
  /** The ffmpeg executable for 'ffmpeg' sources. Default `'ffmpeg'` (looked up on PATH). */
  ffmpegPath?: string;
  /** Time source; tests only. Default the system clock. */
  clock?: Clock;
  /** Uniform random numbers in [0, 1) for the backoff jitter; tests only. Default Math.random. */
  random?: () => number;
  /** Resolves camera host names for 'snapshot' and 'mjpeg' sources (signature of dns.lookup); tests only. Default the system resolver. */
  lookup?: LookupFunction;
}

/**
 * The source for `description` (not started). The synthetic scene is made at exactly `size`
 * (scenes accept widths 64..4096 and heights 48..4096).
 *
 * Example: createCameraSource({ kind: 'snapshot', id: 'door', size: { width: 320, height: 240 },
 * url: 'http://10.0.0.5/snapshot.jpg', intervalMs: 2000 }).start(handlers).
 *
 * @throws RangeError/TypeError naming the field for a value out of range; the `kind` for an unknown kind.
 */
export function createCameraSource(description: CameraSourceDescription, options: CreateCameraSourceOptions = {}): CameraSource {
  const { ffmpegPath, clock, random, lookup } = options;
  checkText(description.id, 'id');
  checkSize(description.size);
  const { id, size, backoff, colour } = description;
  switch (description.kind) {
    case 'drop-folder':
      return dropFolder(description.path, {
        id,
        size,
        afterRead: description.afterRead,
        scanIntervalMs: description.scanIntervalMs,
        settleMs: description.settleMs,
        clock,
        colour,
      });
    case 'snapshot':
      return snapshotPoller(description.url, {
        id,
        size,
        intervalMs: description.intervalMs,
        username: description.username,
        password: description.password,
        timeoutMs: description.timeoutMs,
        backoff,
        clock,
        random,
        lookup,
        colour,
      });
    case 'mjpeg':
      return mjpegStream(description.url, {
        id,
        size,
        username: description.username,
        password: description.password,
        stallMs: description.stallMs,
        backoff,
        clock,
        random,
        lookup,
        colour,
      });
    case 'ffmpeg':
      if (colour) throw new RangeError('colour: ffmpeg sources deliver grey frames only; use a snapshot, MJPEG or drop-folder source for the colour mode');
      return ffmpegStream(description.input, {
        id,
        size,
        realtime: description.realtime,
        loop: description.loop,
        inputOptions: description.options,
        stallMs: description.stallMs,
        ffmpegPath,
        backoff,
        clock,
        random,
      });
    case 'synthetic': {
      const sceneOptions = { width: size.width, height: size.height, seed: description.seed };
      const scene = description.scene === 'shadow-room' ? createShadowRoom(sceneOptions) : createScene(description.scene, sceneOptions);
      return syntheticCamera(scene, { id, speed: description.speed, clock, colour });
    }
    default: {
      const unknown: never = description;
      throw new RangeError(`kind must be one of ${Object.values(CameraSourceKind).join(', ')}, got ${JSON.stringify((unknown as { kind: unknown }).kind)}`);
    }
  }
}
