import { outputMask, type Mask } from '../domain/frame.ts';

/**
 * A binary mask packed 32 pixels to a 32-bit word, the form the counting path keeps it in between
 * the threshold and the zone tally (bitmapped binary images as in van den Boomgaard & van Balen
 * 1992; see morphologyBits).
 *
 * Layout: each row takes `words` = ⌈width / 32⌉ words, rows one after the other; pixel x of row y
 * is bit x mod 32 (least significant bit leftmost) of word y · words + ⌊x / 32⌋. The bits past
 * the row end in its last word are padding: readers ignore them, and writers may leave anything
 * there.
 */
export interface BitMask {
  readonly width: number;
  readonly height: number;
  /** Words per row, ⌈width / 32⌉. */
  readonly words: number;
  /** height × words words. */
  readonly data: Int32Array;
}

/** Words per row of a bit mask `width` pixels wide. */
export function wordsPerRow(width: number): number {
  return (width + 31) >>> 5;
}

/** Allocates an empty bit mask of the given size. */
export function createBitMask(width: number, height: number): BitMask {
  const words = wordsPerRow(width);
  return { width, height, words, data: new Int32Array(words * height) };
}

/** Returns `out` when given and of the right size, else a new bit mask; throws when `out` does not fit. */
export function outputBitMask(width: number, height: number, out?: BitMask): BitMask {
  if (out === undefined) return createBitMask(width, height);
  if (out.width !== width || out.height !== height || out.words !== wordsPerRow(width) || out.data.length !== out.words * height) {
    throw new RangeError(`out bit mask is ${out.width}×${out.height}, expected ${width}×${height}`);
  }
  return out;
}

/** Packs a byte mask (any non-zero byte is set) into a bit mask; the padding bits are 0. */
export function packMask(mask: Mask, out?: BitMask): BitMask {
  const { width, height, data } = mask;
  const result = outputBitMask(width, height, out);
  const dst = result.data;
  for (let y = 0, i = 0, w = 0; y < height; y++) {
    for (let x0 = 0; x0 < width; x0 += 32, w++) {
      const end = Math.min(32, width - x0);
      let bits = 0;
      for (let b = 0; b < end; b++, i++) bits |= (-data[i] >>> 31) << b;
      dst[w] = bits;
    }
  }
  return result;
}

/** Unpacks a bit mask into a 0/1 byte mask (the padding bits are ignored). */
export function unpackMask(bits: BitMask, out?: Mask): Mask {
  const { width, height, data } = bits;
  const result = outputMask(width, height, out);
  const dst = result.data;
  for (let y = 0, i = 0, w = 0; y < height; y++) {
    for (let x0 = 0; x0 < width; x0 += 32, w++) {
      const end = Math.min(32, width - x0);
      const word = data[w];
      for (let b = 0; b < end; b++, i++) dst[i] = (word >>> b) & 1;
    }
  }
  return result;
}

/** Number of set bits of a 32-bit word (the SWAR population count, Hacker's Delight §5-1). */
export function popcount32(v: number): number {
  v -= (v >>> 1) & 0x55555555;
  v = (v & 0x33333333) + ((v >>> 2) & 0x33333333);
  return (Math.imul((v + (v >>> 4)) & 0x0f0f0f0f, 0x01010101) >>> 24);
}
