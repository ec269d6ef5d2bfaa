import { describe, expect, it } from 'vitest';
import sharp from 'sharp';
import { decodeImage } from '../../src/frames/decodeImage.ts';
import { FrameError } from '../../src/frames/FrameError.ts';
import { encodeGrey, flatPng, greyPixels, pngBomb, truncatedJpeg } from './fixtures.ts';

/** Expects `promise` to reject with a FrameError about `name` whose message matches `reason`. */
async function expectFrameError(promise: Promise<unknown>, name: string, reason: RegExp): Promise<void> {
  const error = await promise.then(
    () => undefined,
    (e: unknown) => e,
  );
  expect(error).toBeInstanceOf(FrameError);
  expect((error as FrameError).source).toBe(name);
  expect((error as FrameError).message.startsWith(`${name}: `)).toBe(true);
  expect((error as FrameError).message).toMatch(reason);
}

describe('decodeImage: grey levels', () => {
  // Two halves and two bands, so that x (left → right) and y (top → bottom) are both checked.
  const width = 64;
  const height = 48;
  const level = (x: number, y: number): number => (y < 16 ? 20 : x < 32 ? 90 : 200);
  const pixels = greyPixels(width, height, level);

  for (const [format, tolerance] of [['png', 0], ['webp', 0], ['jpeg', 1]] as const) {
    it(`decodes ${format} to the levels it was made of${tolerance ? ` (±${tolerance}, lossy)` : ''}`, async () => {
      const file = await encodeGrey(pixels, width, height, format, { lossless: true, quality: 100 });
      const frame = await decodeImage(file, { width, height, name: `test.${format}` });
      expect(frame.width).toBe(width);
      expect(frame.height).toBe(height);
      expect(frame.data).toBeInstanceOf(Float32Array);
      expect(frame.data.length).toBe(width * height);
      let worst = 0;
      for (let y = 0; y < height; y++) {
        for (let x = 0; x < width; x++) worst = Math.max(worst, Math.abs(frame.data[y * width + x] - level(x, y)));
      }
      expect(worst).toBeLessThanOrEqual(tolerance);
    });
  }

  it('resizes to the long side (320 by default), keeping flat areas flat', async () => {
    const frame = await decodeImage(await flatPng(640, 480, 77));
    expect([frame.width, frame.height]).toEqual([320, 240]);
    expect(Math.min(...frame.data)).toBe(77);
    expect(Math.max(...frame.data)).toBe(77);
    const small = await decodeImage(await flatPng(640, 480, 77), { longSide: 40 });
    expect([small.width, small.height]).toEqual([40, 30]);
    const byWidth = await decodeImage(await flatPng(640, 360, 77), { width: 100 });
    expect([byWidth.width, byWidth.height]).toEqual([100, 56]);
  });

  it('stretches to width × height when both are given, and checks the aspect ratio on request', async () => {
    const square = await flatPng(50, 50, 10);
    const stretched = await decodeImage(square, { width: 40, height: 20 });
    expect([stretched.width, stretched.height]).toEqual([40, 20]);
    await expectFrameError(
      decodeImage(square, { width: 40, height: 20, aspectTolerance: 0.01, name: 'sq.png' }),
      'sq.png',
      /source is 50×50 .*model is 40×20/,
    );
  });

  it('keeps the halves in place when downscaling (x to the right, y down)', async () => {
    const frame = await decodeImage(await encodeGrey(pixels, width, height, 'png'), { width: 32, height: 24 });
    expect(frame.data[2 * 32 + 16]).toBe(20); // top band
    expect(frame.data[16 * 32 + 4]).toBe(90); // bottom left, away from the edges
    expect(frame.data[16 * 32 + 28]).toBe(200); // bottom right
  });

  it('reduces 16-bit grey to 8-bit levels', async () => {
    // A Uint16Array as raw input makes sharp take 16-bit samples.
    const file = await sharp(new Uint16Array(64).fill(40000), { raw: { width: 8, height: 8, channels: 1 } })
      .toColourspace('grey16')
      .png()
      .toBuffer();
    expect((await sharp(file).metadata()).depth).toBe('ushort');
    const frame = await decodeImage(file, { width: 8, height: 8 });
    // 40000 / 65535 · 255 = 155.6
    expect(Math.abs(frame.data[27] - 155.6)).toBeLessThanOrEqual(1);
  });

  it('applies the EXIF orientation', async () => {
    // A 40×20 JPEG tagged "rotate 90° clockwise to display" (EXIF orientation 6) is 20×40 upright.
    const tagged = await sharp(greyPixels(40, 20, () => 128), { raw: { width: 40, height: 20, channels: 1 } })
      .jpeg()
      .withMetadata({ orientation: 6 })
      .toBuffer();
    const frame = await decodeImage(tagged, { longSide: 40 });
    expect([frame.width, frame.height]).toEqual([20, 40]);
  });
});

describe('decodeImage: colour to grey', () => {
  // check: sRGB transfer function of IEC 61966-2-1:1999, and the luminance weights of the
  // ITU-R BT.709 primaries (0.2126, 0.7152, 0.0722) applied to linear light. This is what libvips
  // does for colourspace B_W (vips_col_scRGB2BW in libvips/colour/LabQ2sRGB.c: weight the
  // linearised values, then encode with the sRGB curve; linear-light greyscale since libvips
  // issue #266). It is not the BT.601 luma of gamma-encoded values (0.299 R' + 0.587 G' + 0.114 B').
  const toLinear = (c: number): number => (c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4);
  const toSrgb = (l: number): number => (l <= 0.0031308 ? 12.92 * l : 1.055 * l ** (1 / 2.4) - 0.055);
  const reference = ([r, g, b]: readonly number[]): number =>
    255 * toSrgb(0.2126 * toLinear(r / 255) + 0.7152 * toLinear(g / 255) + 0.0722 * toLinear(b / 255));

  const colours = [
    [255, 0, 0], [0, 255, 0], [0, 0, 255], [255, 255, 0], [0, 255, 255], [255, 0, 255],
    [200, 100, 50], [30, 160, 220], [90, 40, 140], [0, 0, 0], [128, 128, 128], [255, 255, 255],
  ] as const;

  it('matches sRGB-linearised BT.709 luminance within one level', async () => {
    // One 8×8 patch per colour, side by side, lossless PNG.
    const patch = 8;
    const width = patch * colours.length;
    const rgb = Buffer.alloc(width * patch * 3);
    for (let y = 0; y < patch; y++) {
      for (let x = 0; x < width; x++) rgb.set(colours[Math.floor(x / patch)], (y * width + x) * 3);
    }
    const png = await sharp(rgb, { raw: { width, height: patch, channels: 3 } }).png().toBuffer();
    const frame = await decodeImage(png, { width, height: patch });
    colours.forEach((colour, i) => {
      const decoded = frame.data[4 * width + i * patch + 4];
      expect(Math.abs(decoded - reference(colour)), `colour ${colour.join(',')}`).toBeLessThanOrEqual(1);
    });
    // Pure red: 127 by linear-light BT.709 weights, 76 by BT.601 luma: sharp is the former.
    expect(Math.abs(frame.data[4] - 0.299 * 255)).toBeGreaterThan(40);
  });
});

describe('decodeImage: bad input', () => {
  it('refuses a zero-byte file', async () => {
    await expectFrameError(decodeImage(Buffer.alloc(0), { name: 'frames/000.jpg' }), 'frames/000.jpg', /zero-byte file/);
  });

  it('refuses a truncated JPEG (that a lenient decoder would accept)', async () => {
    const cut = await truncatedJpeg();
    // The same bytes decode without complaint when sharp is told not to fail: the check is ours.
    await expect(sharp(cut, { failOn: 'none' }).raw().toBuffer()).resolves.toBeInstanceOf(Buffer);
    await expectFrameError(decodeImage(cut, { name: 'frames/003.jpg' }), 'frames/003.jpg', /truncated or corrupt image \(.*premature end/i);
  });

  it('refuses a truncated PNG', async () => {
    const png = await encodeGrey(greyPixels(64, 64, (x, y) => (x * 7 + y * 13) % 256), 64, 64, 'png');
    await expectFrameError(decodeImage(png.subarray(0, png.length - 40), { name: 'cut.png' }), 'cut.png', /truncated or corrupt/);
  });

  it('refuses random bytes', async () => {
    const noise = Buffer.alloc(4096);
    let state = 12345;
    for (let i = 0; i < noise.length; i++) {
      state = (state * 1103515245 + 12345) % 2147483648;
      noise[i] = state >>> 23;
    }
    await expectFrameError(decodeImage(noise, { name: 'noise.png' }), 'noise.png', /not an image/);
  });

  it('refuses a decompression bomb from its header, naming the declared size', async () => {
    const bomb = pngBomb(100_000, 100_000);
    expect(bomb.length).toBeLessThan(2000);
    await expectFrameError(
      decodeImage(bomb, { name: 'bomb.png' }),
      'bomb.png',
      /100000×100000 = 10000000000 pixels, more than limitInputPixels \(100000000\)/,
    );
  });

  it('honours a lower limitInputPixels, inclusively', async () => {
    const image = await flatPng(20, 10, 5);
    await expect(decodeImage(image, { limitInputPixels: 200 })).resolves.toMatchObject({ width: 320 });
    await expectFrameError(decodeImage(image, { limitInputPixels: 199, name: 'x.png' }), 'x.png', /limitInputPixels/);
  });

  it('rejects bad options, naming the field', async () => {
    const image = await flatPng(4, 4, 5);
    await expect(decodeImage(image, { width: 0 })).rejects.toThrow(/width/);
    await expect(decodeImage(image, { height: 10 })).rejects.toThrow(/height needs width/);
    await expect(decodeImage(image, { longSide: 2.5 })).rejects.toThrow(/longSide/);
  });
});
