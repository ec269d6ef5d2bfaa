import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { ColourFrameItem } from './colourFrame.ts';
import { decodeColour } from './decodeColour.ts';
import { FrameError } from './FrameError.ts';
import { readImageFolder, type ReadImageFolderOptions } from './readImageFolder.ts';

/**
 * The images of one folder as grey frames (readImageFolder: its order, working size, `every`,
 * `limit`, error items and errors) each paired with its colour frame at the same size
 * (decodeColour), for the colour mode. A picture whose colour cannot be decoded becomes an error
 * item like one whose grey cannot.
 *
 * Each file is read twice, once per decoder, so the grey frames are exactly those of the grey
 * mode. Nothing is written anywhere.
 *
 * @throws FrameError (at the first iteration) as readImageFolder.
 */
export async function* readColourFolder(dir: string, options: ReadImageFolderOptions = {}): AsyncGenerator<ColourFrameItem> {
  const { limitInputPixels, signal } = options;
  for await (const item of readImageFolder(dir, options)) {
    if (item.error) {
      yield { name: item.name, error: item.error };
      continue;
    }
    const path = join(dir, item.name);
    let next: ColourFrameItem;
    try {
      let bytes: Buffer;
      try {
        bytes = await readFile(path, { signal });
      } catch (error) {
        if (signal?.aborted) throw signal.reason;
        throw new FrameError(path, `cannot read file (${(error as Error).message})`, { cause: error });
      }
      const colour = await decodeColour(bytes, { width: item.frame.width, height: item.frame.height, name: path, limitInputPixels });
      next = { name: item.name, frame: item.frame, colour };
    } catch (error) {
      if (signal?.aborted) throw signal.reason;
      if (!(error instanceof FrameError)) throw error;
      next = { name: item.name, error };
    }
    yield next;
  }
}
