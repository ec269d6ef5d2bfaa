/**
 * A folder that cameras upload snapshots into (FTP, SMB, a camera's "save to NAS" setting), read
 * as a live source.
 *
 * ┌──────────────────────────────────────────────────────────────────────────────────────────┐
 * │ PRIVACY: by default (`afterRead: 'delete'`) every image is DELETED from the folder as soon │
 * │ as it has been read — whether it decoded or not — so that pictures of people are not left  │
 * │ lying around. Only with `afterRead: 'keep'` do the files stay; then whoever manages the    │
 * │ folder is responsible for removing them.                                                   │
 * └──────────────────────────────────────────────────────────────────────────────────────────┘
 */
import { watch, type FSWatcher } from 'node:fs';
import { readdir, readFile, stat, unlink } from 'node:fs/promises';
import { extname, join } from 'node:path';
import { FrameError } from '../FrameError.ts';
import { naturalSort } from '../naturalSort.ts';
import { IMAGE_EXTENSIONS } from '../readImageFolder.ts';
import type { Size } from '../workingSize.ts';
import { badFrameStreak } from './badFrameStreak.ts';
import type { CameraHandlers, CameraSource, SourceState, StatusDetail } from './cameraSource.ts';
import { checkSize, checkText, checkWhole } from './checkOptions.ts';
import { systemClock, type Clock } from './clock.ts';
import { decodeLiveFrame, type LiveFrame } from './decodeLiveFrame.ts';
import { sourceSizeChange, type SourceSizeChange } from './sourceSizeChange.ts';

/** What happens to a file once read. */
export const AfterRead = {
  /** Delete it (the default): no picture stays in the folder. */
  delete: 'delete',
  /** Leave it; it is remembered (name and modification time) so that it is not read twice. */
  keep: 'keep',
} as const;
export type AfterRead = (typeof AfterRead)[keyof typeof AfterRead];

export interface DropFolderOptions {
  /** The camera id. Required. */
  id: string;
  /** The working size every image is resized to (the model's), whole pixels ≥ 1. Required. */
  size: Size;
  /** 'delete' (default: each file is deleted once read, decoded or not) or 'keep'. See the PRIVACY note. */
  afterRead?: AfterRead;
  /** Time between two scans of the folder (the fallback when change events do not come), milliseconds, a whole number ≥ 1. Default 2000. */
  scanIntervalMs?: number;
  /** A file is complete once its size and modification time are unchanged across two checks at least this far apart, milliseconds, a whole number ≥ 0. Default 1000. */
  settleMs?: number;
  /** Largest file read, bytes (inclusive), a whole number ≥ 1; larger ones are bad frames. Default 20 MiB. */
  maxBytes?: number;
  /** Bad files in a row after which the source is reported offline (until a good one), a whole number ≥ 1. Default 5. */
  badFramesBeforeOffline?: number;
  /** Largest image accepted in pixels (inclusive), see decodeImage. Default 100 000 000. */
  limitInputPixels?: number;
  /** Also deliver each frame in colour (the colour mode; see decodeLiveFrame). Default false. */
  colour?: boolean;
  /** Time source; tests only. Default the system clock. */
  clock?: Clock;
}

/** Extensions of files still being written by common uploaders; such files are never read. */
const PARTIAL_EXTENSIONS: readonly string[] = ['.part', '.tmp', '.partial', '.crdownload', '.filepart'];

/**
 * Watches `path` for image files (extensions {@link IMAGE_EXTENSIONS}, case ignored; hidden
 * files, subfolders, empty files and names ending in .part/.tmp/… are ignored) and delivers each
 * once, decoded to a grey frame at `size`, with `capturedAt` = the file's modification time.
 *
 * New files are noticed by fs.watch and, because fs.watch misses events on some filesystems
 * (network shares, some containers), by a scan every `scanIntervalMs`. A file is read only once
 * complete: its size and modification time must be the same at two checks `settleMs` apart (so an
 * uploader that pauses longer than `settleMs` in mid-file should write to a .part/.tmp name and
 * rename). Files that are complete at the same time are read in natural name order (img2 before
 * img10).
 *
 * A file that cannot be read or decoded (truncated, not an image, wrong aspect ratio, larger
 * than `maxBytes`) is a `badFrame`, then deleted or kept like any other. After
 * `badFramesBeforeOffline` bad files in a row the source is `offline` (reason `N bad frames in
 * a row, the last: …` or `wrong aspect ratio: …`) until a good file comes.
 *
 * `afterRead: 'delete'` (default) deletes each file once read; a file that cannot be deleted is a
 * `badFrame` and is not read again. `afterRead: 'keep'` leaves the files and remembers the
 * (name, modification time) pairs read, in memory: a file replaced under the same name is read
 * again; after a restart, the files still there are read again.
 *
 * When the images' own size changes with the same aspect ratio (from one file to the next), the
 * source reports `online` again before the frame of the new size (see cameraSource.ts).
 *
 * Status: `online` while the folder can be listed; `offline` (reason `folder not found`, `not a
 * folder`, `cannot list the folder (…)`, `retryInMs` = scanIntervalMs) when it cannot, retried
 * at every scan.
 */
export function dropFolder(path: string, options: DropFolderOptions): CameraSource {
  const {
    id,
    size,
    afterRead = 'delete',
    scanIntervalMs = 2000,
    settleMs = 1000,
    maxBytes = 20 * 1024 * 1024,
    badFramesBeforeOffline = 5,
    limitInputPixels,
    colour = false,
    clock = systemClock,
  } = options;
  checkText(id, 'id');
  checkText(path, 'path');
  checkSize(size);
  if (afterRead !== 'delete' && afterRead !== 'keep') throw new RangeError(`afterRead must be 'delete' or 'keep', got ${String(afterRead)}`);
  checkWhole(scanIntervalMs, 'scanIntervalMs', 1);
  checkWhole(settleMs, 'settleMs', 0);
  checkWhole(maxBytes, 'maxBytes', 1);
  checkWhole(badFramesBeforeOffline, 'badFramesBeforeOffline', 1);
  const streak = badFrameStreak(badFramesBeforeOffline);

  let handlers: CameraHandlers | undefined;
  let stopped = false;
  let state: SourceState | undefined;
  let offlineReason: string | undefined;
  /** Whether the offline state comes from bad files (cleared by a good one) rather than the folder. */
  let offlineForFrames = false;
  let watcher: FSWatcher | undefined;
  let timer: unknown;
  let timerAt = Infinity;
  let scanning: Promise<void> | undefined;
  let rescan = false;
  /** Last size and modification time seen per file name, and since when they have been so. */
  const seen = new Map<string, { size: number; mtimeMs: number; since: number }>();
  /** Files not to read again (kept, or that could not be deleted): name and modification time. */
  const done = new Set<string>();
  /** The size of the last image delivered. */
  let lastSource: Size | undefined;

  const setStatus = (next: SourceState, detail: Omit<StatusDetail, 'at'> = {}): void => {
    if (next === state && detail.reason === offlineReason) return;
    state = next;
    offlineReason = detail.reason;
    handlers?.status(next, { at: clock.now(), ...detail });
  };

  /** A change of image size while online: reported as such, whatever the last status said. */
  const reportSizeChange = (change: SourceSizeChange): void => {
    handlers?.status('online', { at: clock.now(), ...change });
  };

  /** Schedules a scan `ms` from now unless one is due sooner. */
  const scanIn = (ms: number): void => {
    if (stopped) return;
    const at = clock.now() + ms;
    if (timer !== undefined && timerAt <= at) return;
    if (timer !== undefined) clock.clearTimeout(timer);
    timerAt = at;
    timer = clock.setTimeout(() => {
      timer = undefined;
      timerAt = Infinity;
      requestScan();
    }, ms);
  };

  const requestScan = (): void => {
    if (stopped) return;
    if (scanning !== undefined) {
      rescan = true;
      return;
    }
    scanning = scan().finally(() => {
      scanning = undefined;
      if (rescan && !stopped) {
        rescan = false;
        requestScan();
      }
    });
  };

  const startWatching = (): void => {
    if (watcher !== undefined) return;
    try {
      watcher = watch(path, { persistent: true }, () => requestScan());
      watcher.on('error', () => {
        // The folder went away or the watch broke: the scans go on and start a new watch.
        watcher?.close();
        watcher = undefined;
      });
    } catch {
      watcher = undefined; // no watch (e.g. inotify limit reached): the periodic scan is enough
    }
  };

  const scan = async (): Promise<void> => {
    let names: string[];
    try {
      const entries = await readdir(path, { withFileTypes: true });
      names = entries
        .filter((entry) => entry.isFile() && isCandidate(entry.name))
        .map((entry) => entry.name);
    } catch (error) {
      if (stopped) return;
      watcher?.close();
      watcher = undefined;
      const code = (error as NodeJS.ErrnoException).code;
      const reason = code === 'ENOENT' ? 'folder not found' : code === 'ENOTDIR' ? 'not a folder' : `cannot list the folder (${(error as Error).message})`;
      offlineForFrames = false;
      setStatus('offline', { reason: new FrameError(path, reason).message, retryInMs: scanIntervalMs });
      scanIn(scanIntervalMs);
      return;
    }
    if (stopped) return;
    startWatching();
    if (state !== 'online' && !offlineForFrames) setStatus('online');

    // Forget what is no longer there.
    const present = new Set(names);
    for (const name of seen.keys()) if (!present.has(name)) seen.delete(name);
    for (const key of done) if (!present.has(key.slice(0, key.lastIndexOf('\0')))) done.delete(key);

    const ready: { name: string; size: number; mtimeMs: number }[] = [];
    let waiting = false;
    const now = clock.now();
    for (const name of naturalSort(names)) {
      let info;
      try {
        info = await stat(join(path, name));
      } catch {
        continue; // gone meanwhile
      }
      if (stopped) return;
      if (!info.isFile() || info.size === 0) continue;
      if (done.has(keyOf(name, info.mtimeMs))) continue;
      const before = seen.get(name);
      if (before !== undefined && before.size === info.size && before.mtimeMs === info.mtimeMs) {
        if (now - before.since >= settleMs) ready.push({ name, size: info.size, mtimeMs: info.mtimeMs });
        else waiting = true;
      } else {
        seen.set(name, { size: info.size, mtimeMs: info.mtimeMs, since: now });
        waiting = true;
      }
    }
    for (const file of ready) {
      if (stopped) return;
      await take(file);
    }
    if (stopped) return;
    scanIn(waiting ? Math.min(Math.max(settleMs, 1), scanIntervalMs) : scanIntervalMs);
  };

  /** Reads, decodes, delivers and deletes (or remembers) one complete file. */
  const take = async (file: { name: string; size: number; mtimeMs: number }): Promise<void> => {
    const filePath = join(path, file.name);
    seen.delete(file.name);
    let result: { decoded: LiveFrame } | { error: FrameError } | undefined;
    if (file.size > maxBytes) {
      result = { error: new FrameError(filePath, `file is ${file.size} bytes, more than maxBytes (${maxBytes})`) };
    } else {
      let bytes: Buffer | undefined;
      try {
        bytes = await readFile(filePath);
      } catch (error) {
        const code = (error as NodeJS.ErrnoException).code;
        if (code === 'ENOENT') return; // removed by someone else meanwhile
        result = { error: new FrameError(filePath, `cannot read file (${(error as Error).message})`, { cause: error }) };
      }
      if (bytes !== undefined) {
        try {
          result = { decoded: await decodeLiveFrame(bytes, size, { name: filePath, limitInputPixels, colour }) };
        } catch (error) {
          if (!(error instanceof FrameError)) throw error;
          result = { error };
        }
      }
    }
    if (result === undefined) return;

    // Delete or remember first, so that the file is gone (or marked) whatever the handlers do.
    let afterError: FrameError | undefined;
    if (afterRead === 'delete') {
      try {
        await unlink(filePath);
      } catch (error) {
        if ((error as NodeJS.ErrnoException).code !== 'ENOENT') {
          done.add(keyOf(file.name, file.mtimeMs));
          afterError = new FrameError(filePath, `read, but cannot be deleted (${(error as Error).message})`, { cause: error });
        }
      }
    } else {
      done.add(keyOf(file.name, file.mtimeMs));
    }
    if (stopped || handlers === undefined) return;

    if ('decoded' in result) {
      const { frame, source } = result.decoded;
      streak.good();
      const change = sourceSizeChange(lastSource, source);
      lastSource = source;
      if (offlineForFrames) {
        offlineForFrames = false;
        setStatus('online', { sourceSize: source, ...change });
      } else if (change !== undefined && state === 'online') {
        reportSizeChange(change);
      }
      handlers.frame(frame, file.mtimeMs, result.decoded.colour);
    } else {
      handlers.badFrame(result.error);
      const reason = streak.bad(result.error);
      if (reason !== undefined) {
        offlineForFrames = true;
        setStatus('offline', { reason });
      }
    }
    if (afterError !== undefined) handlers.badFrame(afterError);
  };

  return {
    id,
    start(given) {
      if (handlers !== undefined) throw new Error(`camera ${id}: start() was already called`);
      if (stopped) throw new Error(`camera ${id}: stopped`);
      handlers = given;
      setStatus('connecting', { attempt: 1 });
      requestScan();
    },
    async stop() {
      stopped = true;
      if (timer !== undefined) clock.clearTimeout(timer);
      timer = undefined;
      watcher?.close();
      watcher = undefined;
      await scanning;
      // A scan that ended meanwhile may have made a new watch: close it too.
      (watcher as FSWatcher | undefined)?.close();
      watcher = undefined;
    },
  };
}

/** Whether a file name is read at all: an image extension, not hidden, not a partial upload. */
function isCandidate(name: string): boolean {
  if (name.startsWith('.')) return false;
  const extension = extname(name).toLowerCase();
  if (PARTIAL_EXTENSIONS.includes(extension)) return false;
  return IMAGE_EXTENSIONS.includes(extension);
}

function keyOf(name: string, mtimeMs: number): string {
  return `${name}\0${mtimeMs}`;
}
