import type { Mask } from '../domain/frame.ts';

/**
 * The last foreground mask of a camera, in memory shared between the camera's worker thread
 * (which writes it after every counted frame) and the main thread (which reads it only when an
 * admin asks for the coarse mask preview). It never leaves memory.
 *
 * Consistency: a sequence lock (seqlock, as in the Linux kernel's `seqlock_t`): the writer makes
 * the sequence number odd, copies, and makes it even again, with Atomics (sequentially consistent,
 * ECMAScript memory model); a reader copies between two reads of the sequence number and keeps
 * the copy when both are the same even number. The writer never waits for a reader.
 *
 * Layout of the buffer: Int32 [sequence, written (0/1)], then width × height bytes of 0/1,
 * row-major as in {@link Mask}.
 *
 * ```ts
 * const shared = sharedMask({ width: 320, height: 240 });    // main thread; post shared.buffer
 * sharedMask({ width: 320, height: 240 }, { buffer }).write(mask); // worker, after each frame
 * shared.read();                                              // main: a copy, or undefined
 * ```
 */
export interface SharedMask {
  readonly buffer: SharedArrayBuffer;
  readonly width: number;
  readonly height: number;
  /** Copies `mask` (of exactly width × height) in. */
  write(mask: Mask): void;
  /** A copy of the last mask written since the last `clear()`, or undefined. */
  read(): Mask | undefined;
  /** Forgets the mask (a restarted worker has counted nothing yet). */
  clear(): void;
}

export interface SharedMaskOptions {
  /** The buffer of an existing shared mask (as made by another thread); default a new one. Its size must be 8 + width × height bytes. */
  readonly buffer?: SharedArrayBuffer;
  /** Attempts of `read()` to get a copy no write overlapped, ≥ 1; default 16. After that the last whole copy this reader got is returned (an older mask, never two mixed), or undefined if it has none. */
  readonly readAttempts?: number;
}

const HEADER_BYTES = 8;

export function sharedMask(size: { width: number; height: number }, options: SharedMaskOptions = {}): SharedMask {
  const { buffer = new SharedArrayBuffer(HEADER_BYTES + size.width * size.height), readAttempts = 16 } = options;
  const { width, height } = size;
  if (!(Number.isInteger(width) && width >= 1 && Number.isInteger(height) && height >= 1)) {
    throw new RangeError(`size: expected whole width and height ≥ 1, got ${String(width)}×${String(height)}`);
  }
  if (!(buffer instanceof SharedArrayBuffer) || buffer.byteLength !== HEADER_BYTES + width * height) {
    throw new RangeError(`buffer: expected a SharedArrayBuffer of ${HEADER_BYTES + width * height} bytes, got ${buffer instanceof SharedArrayBuffer ? buffer.byteLength + ' bytes' : typeof buffer}`);
  }
  if (!(Number.isInteger(readAttempts) && readAttempts >= 1)) throw new RangeError(`readAttempts: expected a whole number ≥ 1, got ${String(readAttempts)}`);
  const header = new Int32Array(buffer, 0, 2);
  const data = new Uint8Array(buffer, HEADER_BYTES, width * height);
  /** This reader's last copy that no write overlapped. */
  let lastWhole: Uint8Array | undefined;
  return {
    buffer,
    width,
    height,
    write(mask) {
      if (mask.width !== width || mask.height !== height) throw new RangeError(`mask: expected ${width}×${height}, got ${mask.width}×${mask.height}`);
      Atomics.add(header, 0, 1);
      data.set(mask.data);
      Atomics.store(header, 1, 1);
      Atomics.add(header, 0, 1);
    },
    read() {
      for (let attempt = 0; attempt < readAttempts; attempt++) {
        const before = Atomics.load(header, 0);
        if (before % 2 !== 0) continue;
        if (Atomics.load(header, 1) === 0) {
          if (Atomics.load(header, 0) !== before) continue;
          lastWhole = undefined;
          return undefined;
        }
        const copy = data.slice();
        if (Atomics.load(header, 0) !== before) continue;
        lastWhole = copy;
        return { width, height, data: copy.slice() };
      }
      // Writes kept overlapping (the writer's thread was descheduled mid-write, say): the last
      // whole copy, never a torn one.
      return lastWhole === undefined ? undefined : { width, height, data: lastWhole.slice() };
    },
    clear() {
      Atomics.add(header, 0, 1);
      Atomics.store(header, 1, 0);
      Atomics.add(header, 0, 1);
    },
  };
}
