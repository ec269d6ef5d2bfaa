/**
 * Why a frame source or a single frame could not be read: `source` names the file, folder or
 * stream (as the caller gave it), and the message starts with it, e.g.
 * `frames/003.jpg: truncated or corrupt image (VipsJpeg: premature end of JPEG image)`.
 *
 * Messages never contain pixel data.
 */
export class FrameError extends Error {
  /** The file, folder or stream the error is about. */
  readonly source: string;

  constructor(source: string, reason: string, options?: { cause?: unknown }) {
    super(`${source}: ${reason}`, options);
    this.name = 'FrameError';
    this.source = source;
  }
}
