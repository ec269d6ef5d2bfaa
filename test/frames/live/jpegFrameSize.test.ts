import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { jpegFrameSize } from '../../../src/frames/live/jpegFrameSize.ts';
import { flatPng, greyPixels } from '../fixtures.ts';

/** A grey test pattern (stripes, no people) as a JPEG, baseline or progressive, with an EXIF orientation if given. */
function jpeg(width: number, height: number, options: { progressive?: boolean; orientation?: number; colour?: boolean } = {}): Promise<Buffer> {
  const pixels = greyPixels(width, height, (x, y) => ((x >> 3) + (y >> 2)) % 2 ? 200 : 40);
  let image = sharp(pixels, { raw: { width, height, channels: 1 } });
  if (options.colour) image = image.toColourspace('srgb');
  if (options.orientation !== undefined) image = image.withMetadata({ orientation: options.orientation });
  return image.jpeg({ quality: 90, progressive: options.progressive ?? false }).toBuffer();
}

/** sharp's own reading of the header: the size after EXIF orientation. */
async function sharpSize(data: Buffer): Promise<{ width: number; height: number }> {
  const meta = await sharp(data).metadata();
  return meta.autoOrient ?? { width: meta.width, height: meta.height };
}

describe('jpegFrameSize', () => {
  // check: sharp (libvips) metadata().autoOrient of the same JPEGs, EXIF orientations 1–8.
  it('gives the size sharp reads, for baseline, progressive and colour JPEGs and every EXIF orientation', async () => {
    const cases: Buffer[] = [
      await jpeg(640, 480),
      await jpeg(1280, 960, { progressive: true }),
      await jpeg(321, 241, { colour: true }),
      await jpeg(1, 1),
    ];
    for (let orientation = 1; orientation <= 8; orientation++) cases.push(await jpeg(160, 120, { orientation }));
    for (const data of cases) expect(jpegFrameSize(data)).toEqual(await sharpSize(data));
    // Orientation 6 (a quarter turn): the shown image is 120 wide, 160 high.
    expect(jpegFrameSize(cases[4 + 5])).toEqual({ width: 120, height: 160 });
  });

  it('gives undefined for what is not a readable JPEG header, so that the caller asks a decoder', async () => {
    const whole = await jpeg(64, 48);
    expect(jpegFrameSize(await flatPng(64, 48, 100))).toBeUndefined();
    expect(jpegFrameSize(new Uint8Array(0))).toBeUndefined();
    expect(jpegFrameSize(Uint8Array.of(0xff, 0xd8, 0xff, 0xd9))).toBeUndefined(); // SOI EOI, no frame
    // Cut inside the headers, before the frame header is complete.
    const sof = whole.indexOf(Buffer.from([0xff, 0xc0]));
    expect(sof).toBeGreaterThan(0);
    expect(jpegFrameSize(whole.subarray(0, sof + 6))).toBeUndefined();
    expect(jpegFrameSize(whole.subarray(0, sof + 9))).toEqual({ width: 64, height: 48 });
    // ITU-T T.81 B.2.5: a height of 0 in the frame header is given later by a DNL marker.
    const dnl = Buffer.from(whole);
    dnl.writeUInt16BE(0, sof + 5);
    expect(jpegFrameSize(dnl)).toBeUndefined();
  });

  it('skips fill bytes before markers (T.81 B.1.1.2)', async () => {
    const whole = await jpeg(64, 48);
    const sof = whole.indexOf(Buffer.from([0xff, 0xc0]));
    const filled = Buffer.concat([whole.subarray(0, sof), Buffer.from([0xff, 0xff, 0xff]), whole.subarray(sof)]);
    expect(jpegFrameSize(filled)).toEqual({ width: 64, height: 48 });
    // check: libjpeg (through sharp) reads the same stream.
    expect(await sharpSize(filled)).toEqual({ width: 64, height: 48 });
  });
});
