import { readdir, readFile } from 'node:fs/promises';
import { extname, join } from 'node:path';
import { decodeImage } from './decodeImage.ts';
import type { ColourFrameItem } from '../domain/colourFrame.ts';
import type { FrameItem } from '../domain/frame.ts';
import { FrameError } from './FrameError.ts';
import { frameSourceOptions, type FrameSourceOptions } from './frameSourceOptions.ts';
import { naturalSort } from './naturalSort.ts';

/** File name extensions read as images, compared in lower case. */
export const IMAGE_EXTENSIONS: readonly string[] = ['.jpg', '.jpeg', '.png', '.webp', '.tif', '.tiff', '.gif'];

export interface ReadImageFolderOptions extends FrameSourceOptions {
  /** Largest image accepted, in pixels (inclusive); see decodeImage. Default 100 000 000. */
  limitInputPixels?: number;
  /** Also give each item its colour frame (decodeImage's `colour`, the same decode). Default false. */
  colour?: boolean;
}

/**
 * The images of one folder as grey frames at the working size, one at a time, in natural name
 * order (frame2.png before frame10.png, case ignored). Only the folder itself is read, not its
 * subfolders; names starting with '.' (hidden files) are skipped, and so is any file whose
 * extension is not one of {@link IMAGE_EXTENSIONS} (case ignored).
 *
 * The working size: `width` and `height` both given fix it (the model's size) and every image is
 * resized to it, an image whose aspect ratio is more than 1 % off being an error item. Otherwise
 * the first image that decodes sets it (workingSize from `width` or `longSide`), and the later
 * images are held to it in the same way.
 *
 * `every` keeps images 0, every, 2·every, … of the sorted list (counting bad files too), and
 * `limit` stops after that many items. An image that cannot be read or decoded yields
 * `{ name, error: FrameError }` and reading goes on; item names are the file names.
 *
 * @throws FrameError (at the first iteration) when the folder is missing, is not a folder, or
 *   holds no images; the signal's reason when `signal` aborts.
 */
export function readImageFolder(dir: string, options: ReadImageFolderOptions & { colour: true }): AsyncGenerator<ColourFrameItem>;
export function readImageFolder(dir: string, options?: ReadImageFolderOptions): AsyncGenerator<FrameItem>;
export async function* readImageFolder(dir: string, options: ReadImageFolderOptions = {}): AsyncGenerator<FrameItem | ColourFrameItem> {
  const { width, height, longSide, every, limit, signal } = frameSourceOptions(options);
  const { limitInputPixels, colour = false } = options;
  signal?.throwIfAborted();

  let entries;
  try {
    entries = await readdir(dir, { withFileTypes: true });
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    const reason =
      code === 'ENOENT' ? 'folder not found' : code === 'ENOTDIR' ? 'not a folder' : (error as Error).message;
    throw new FrameError(dir, reason, { cause: error });
  }
  const candidates = entries.filter((entry) => !entry.isDirectory() && !entry.name.startsWith('.'));
  const images = naturalSort(
    candidates.map((entry) => entry.name).filter((name) => IMAGE_EXTENSIONS.includes(extname(name).toLowerCase())),
  );
  if (images.length === 0) {
    throw new FrameError(
      dir,
      entries.length === 0
        ? 'folder is empty'
        : `no images in folder (looked for ${IMAGE_EXTENSIONS.join(' ')}; found ${entries.length} other entries)`,
    );
  }

  // Fixed by the caller (the model size) or by the first image that decodes.
  let size = width !== undefined && height !== undefined ? { width, height } : undefined;
  let yielded = 0;
  for (let index = 0; index < images.length && yielded < limit; index += every) {
    signal?.throwIfAborted();
    const name = images[index];
    const path = join(dir, name);
    let item: FrameItem | ColourFrameItem;
    try {
      let bytes: Buffer;
      try {
        bytes = await readFile(path, { signal });
      } catch (error) {
        if (signal?.aborted) throw signal.reason;
        throw new FrameError(path, `cannot read file (${(error as Error).message})`, { cause: error });
      }
      const frame = await decodeImage(bytes, {
        ...(size ? { width: size.width, height: size.height, aspectTolerance: 0.01 } : { width, longSide }),
        name: path,
        limitInputPixels,
        colour,
      });
      size ??= { width: frame.width, height: frame.height };
      const grey = { width: frame.width, height: frame.height, data: frame.data };
      item = frame.colour === undefined ? { name, frame: grey } : { name, frame: grey, colour: frame.colour };
    } catch (error) {
      if (signal?.aborted) throw signal.reason;
      if (!(error instanceof FrameError)) throw error;
      item = { name, error };
    }
    yielded++;
    yield item;
  }
}
