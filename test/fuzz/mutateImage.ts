import { crc32 } from 'node:zlib';

/** Kinds of damage done to an image file. */
export const Mutation = ['bitFlips', 'truncate', 'wrongHeader', 'hugeDimensions', 'splice', 'zeroRun'] as const;
export type Mutation = (typeof Mutation)[number];

const headers = [
  Buffer.from([0xff, 0xd8, 0xff, 0xe0]), // JPEG
  Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]), // PNG
  Buffer.from('GIF89a', 'latin1'),
  Buffer.from('RIFF\0\0\0\0WEBP', 'latin1'),
  Buffer.from('BM', 'latin1'),
];

/**
 * A damaged copy of an image file, deterministic for (seed image, kind, random draws).
 * `hugeDimensions` declares a 60000×60000 image (a decompression bomb) in a PNG (with a valid
 * header checksum, so that only the size can stop it) or in a JPEG's frame header.
 */
export function mutateImage(image: Buffer, kind: Mutation, rand: () => number): Buffer {
  const out = Buffer.from(image);
  const at = (n: number) => Math.floor(rand() * n);
  switch (kind) {
    case 'bitFlips': {
      const flips = 1 + at(24);
      for (let i = 0; i < flips; i++) out[at(out.length)] ^= 1 << at(8);
      return out;
    }
    case 'truncate':
      return out.subarray(0, at(out.length));
    case 'wrongHeader': {
      const header = headers[at(headers.length)];
      header.copy(out, 0, 0, Math.min(header.length, out.length));
      return out;
    }
    case 'hugeDimensions':
      return declareHuge(out);
    case 'splice': {
      const from = at(out.length);
      const length = at(Math.min(4096, out.length - from));
      return Buffer.concat([out.subarray(0, from), out.subarray(from + length), out.subarray(from, from + length)]);
    }
    case 'zeroRun': {
      const from = at(out.length);
      out.fill(0, from, Math.min(out.length, from + 1 + at(512)));
      return out;
    }
  }
}

function declareHuge(image: Buffer): Buffer {
  const size = 60000;
  if (image.subarray(1, 4).toString('latin1') === 'PNG') {
    // IHDR: length (4) 'IHDR' (4) width (4) height (4) … CRC over type and data.
    image.writeUInt32BE(size, 16);
    image.writeUInt32BE(size, 20);
    image.writeUInt32BE(crc32(image.subarray(12, 29)), 29);
    return image;
  }
  if (image[0] === 0xff && image[1] === 0xd8) {
    // The first SOFn marker: FF C0..C3, length (2), precision (1), height (2), width (2).
    for (let i = 2; i + 9 < image.length; i++) {
      if (image[i] === 0xff && image[i + 1] >= 0xc0 && image[i + 1] <= 0xc3) {
        image.writeUInt16BE(size, i + 5);
        image.writeUInt16BE(size, i + 7);
        return image;
      }
    }
  }
  return image;
}
