import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { createCameraSource } from '../../../src/frames/live/createCameraSource.ts';
import { decodeLiveFrame } from '../../../src/frames/live/decodeLiveFrame.ts';
import { mjpegStream } from '../../../src/frames/live/mjpegStream.ts';
import { manualClock, record, startServer, waitFor } from './liveFixtures.ts';

/** A 64×48 JPEG: the left half red-brown, the right half blue-grey. */
function twoColourJpeg(): Promise<Buffer> {
  const rgb = Buffer.alloc(64 * 48 * 3);
  for (let i = 0; i < 64 * 48; i++) rgb.set(i % 64 < 32 ? [180, 90, 60] : [70, 90, 140], 3 * i);
  return sharp(rgb, { raw: { width: 64, height: 48, channels: 3 } }).jpeg({ quality: 95 }).toBuffer();
}

describe('colour from the live sources', () => {
  it('decodes a live frame in grey and colour from one decode, the grey the colour\'s luminance', async () => {
    const jpeg = await twoColourJpeg();
    const { frame, colour, source } = await decodeLiveFrame(jpeg, { width: 32, height: 24 }, { colour: true });
    expect(source).toEqual({ width: 64, height: 48 });
    expect(colour?.data.length).toBe(32 * 24 * 3);
    // check: IEC 61966-2-1 sRGB curve with BT.709 weights (as libvips B_W) on the decoded colour pixel
    const lin = (c: number) => (c / 255 <= 0.04045 ? c / 255 / 12.92 : ((c / 255 + 0.055) / 1.055) ** 2.4);
    const enc = (l: number) => 255 * (l <= 0.0031308 ? 12.92 * l : 1.055 * l ** (1 / 2.4) - 0.055);
    for (const i of [12 * 32 + 5, 12 * 32 + 27]) {
      const [r, g, b] = colour!.data.subarray(3 * i, 3 * i + 3);
      expect(Math.abs(frame.data[i] - enc(0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b)))).toBeLessThanOrEqual(0.5);
    }
    expect(colour!.data[3 * (12 * 32 + 5)]).toBeGreaterThan(colour!.data[3 * (12 * 32 + 5) + 2] + 80); // red half
    expect((await decodeLiveFrame(jpeg, { width: 32, height: 24 })).colour).toBeUndefined();
  });

  it('delivers colour frames from an MJPEG stream when asked', async () => {
    const jpeg = await twoColourJpeg();
    const server = await startServer((_request, response) => {
      response.writeHead(200, { 'Content-Type': 'multipart/x-mixed-replace; boundary=frame' });
      for (let i = 0; i < 3; i++) response.write(Buffer.concat([Buffer.from(`--frame\r\nContent-Type: image/jpeg\r\nContent-Length: ${jpeg.length}\r\n\r\n`), jpeg, Buffer.from('\r\n')]));
    });
    const source = mjpegStream(`${server.url}/video`, { id: 'c', size: { width: 32, height: 24 }, colour: true });
    const seen = record();
    source.start(seen.handlers);
    try {
      await waitFor(() => seen.frames.length >= 2, 'two colour frames');
    } finally {
      await source.stop();
      await server.close();
    }
    expect(seen.frames.every((f) => f.colour !== undefined && f.colour.width === 32 && f.colour.height === 24)).toBe(true);
  });

  it('plays the shadow room in colour, and refuses colour where a source has none', async () => {
    const clock = manualClock();
    const size = { width: 160, height: 120 };
    const source = createCameraSource({ kind: 'synthetic', id: 's', size, scene: 'shadow-room', colour: true }, { clock });
    const seen = record();
    source.start(seen.handlers);
    clock.advance(250);
    await source.stop();
    expect(seen.frames.length).toBeGreaterThan(0);
    expect(seen.frames.every((f) => f.colour?.width === 160 && f.colour.height === 120)).toBe(true);
    expect(() => createCameraSource({ kind: 'synthetic', id: 'g', size, scene: 'reading-room', colour: true })).toThrow(/renders grey only/);
    expect(() => createCameraSource({ kind: 'ffmpeg', id: 'f', size, input: 'rtsp://127.0.0.1:9/x', colour: true })).toThrow(/ffmpeg sources deliver grey/);
  });
});
