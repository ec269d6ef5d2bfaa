import { stat } from 'node:fs/promises';
import { isAbsolute } from 'node:path';
import type { FrameItem } from '../domain/frame.ts';
import { FrameError } from './FrameError.ts';
import { readImageFolder, type ReadImageFolderOptions } from './readImageFolder.ts';
import { readVideo, type ReadVideoOptions } from './readVideo.ts';

/** Options of {@link openFrames}: those of both sources; each ignores the other's own field. */
export interface OpenFramesOptions extends ReadImageFolderOptions, ReadVideoOptions {}

/**
 * Frames from a path: a folder is read as images (readImageFolder), anything else as a video
 * (readVideo, so any file ffmpeg reads). A relative video path is given to ffmpeg as "./path" so
 * that it is taken as a file, never as a protocol ("name:…") or as stdin ("-").
 *
 * @throws FrameError (at the first iteration) when nothing exists at `path`; see the two sources
 *   for their own errors.
 */
export async function* openFrames(path: string, options: OpenFramesOptions = {}): AsyncGenerator<FrameItem> {
  const { ffmpegPath, timing, limitInputPixels, ...common } = options;
  let isFolder: boolean;
  try {
    isFolder = (await stat(path)).isDirectory();
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    const reason = code === 'ENOENT' ? 'no such file or folder' : (error as Error).message;
    throw new FrameError(path, reason, { cause: error });
  }
  if (isFolder) yield* readImageFolder(path, { ...common, limitInputPixels });
  else yield* readVideo(isAbsolute(path) ? path : `./${path}`, { ...common, ffmpegPath, timing });
}
