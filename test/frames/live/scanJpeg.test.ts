import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { JPEG_SCAN_START, scanJpeg, type JpegScanState } from '../../../src/frames/live/scanJpeg.ts';
import { greyPixels } from '../fixtures.ts';

/** A noisy grey image (long entropy-coded data, with FF bytes to stuff) as baseline or progressive JPEG. */
function noisyJpeg(progressive: boolean): Promise<Buffer> {
  const pixels = greyPixels(64, 48, (x, y) => ((x * 73856093) ^ (y * 19349663)) >>> 24);
  return sharp(pixels, { raw: { width: 64, height: 48, channels: 1 } }).jpeg({ quality: 90, progressive }).toBuffer();
}

/** Feeds the JPEG (followed by trailing bytes) one byte more at a time, as a stream would. */
function scanGrowing(data: Buffer): ReturnType<typeof scanJpeg> {
  let state: JpegScanState = JPEG_SCAN_START;
  for (let end = 1; end <= data.length; end++) {
    const result = scanJpeg(data, 0, end, state);
    if (result.status !== 'more') return result;
    state = result.state;
  }
  return { status: 'more', state };
}

describe('scanJpeg', () => {
  // check: sharp/libjpeg output, whose length is the JPEG's (ITU-T T.81 Annex B structure).
  it('finds the end of baseline and progressive JPEGs (several scans), at once or resumed byte by byte', async () => {
    for (const progressive of [false, true]) {
      const jpeg = await noisyJpeg(progressive);
      expect(jpeg.includes(Buffer.from([0xff, 0x00])), 'the test image has stuffed bytes').toBe(true);
      const trailing = Buffer.concat([jpeg, Buffer.from('\r\n--frame\r\n')]);
      expect(scanJpeg(trailing, 0, trailing.length)).toEqual({ status: 'end', length: jpeg.length });
      expect(scanGrowing(trailing)).toEqual({ status: 'end', length: jpeg.length });
      // Inside a larger buffer, at an offset.
      const shifted = Buffer.concat([Buffer.from('xyz'), trailing]);
      expect(scanJpeg(shifted, 3, shifted.length)).toEqual({ status: 'end', length: jpeg.length });
    }
  });

  it('asks for more while incomplete and refuses what is no JPEG', async () => {
    const jpeg = await noisyJpeg(false);
    expect(scanJpeg(jpeg, 0, jpeg.length - 1).status).toBe('more');
    expect(scanJpeg(Buffer.from([0xff]), 0, 1).status).toBe('more');
    expect(scanJpeg(Buffer.from('<html>'), 0, 6).status).toBe('invalid');
    expect(scanJpeg(Buffer.from([0xff, 0xd8, 0x12, 0x34]), 0, 4).status).toBe('invalid');
    expect(scanJpeg(Buffer.from([0xff, 0xd8, 0xff, 0xe0, 0x00, 0x01]), 0, 6).status).toBe('invalid'); // length < 2
    // check: T.81 B.1.1.2 — fill bytes FF before a marker; RST and TEM have no length.
    expect(scanJpeg(Buffer.from([0xff, 0xd8, 0xff, 0xff, 0xff, 0x01, 0xff, 0xd9]), 0, 8)).toEqual({ status: 'end', length: 8 });
  });
});
