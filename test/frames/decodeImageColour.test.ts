import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodeImage } from '../../src/frames/decodeImage.ts';
import { FrameError } from '../../src/frames/FrameError.ts';
import { readImageFolder } from '../../src/frames/readImageFolder.ts';
import { collect, flatPng, makeTempDir, pngBomb, removeTempDir, truncatedJpeg } from './fixtures.ts';

/** decodeImage with `colour`: the colour frame alone. */
async function decodeColour(input: Uint8Array, options: { width: number; height: number; name?: string }) {
  const decoded = await decodeImage(input, { ...options, colour: true });
  return decoded.colour!;
}

/** A width × height RGB image: red rising to the right, green rising downwards, blue constant. */
function gradient(width: number, height: number): Buffer {
  const rgb = Buffer.alloc(width * height * 3);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) rgb.set([Math.round((255 * x) / (width - 1)), Math.round((255 * y) / (height - 1)), 90], 3 * (y * width + x));
  }
  return rgb;
}

describe('decodeImage with colour', () => {
  it('gives the RGB pixels of a lossless image, interleaved, x right and y down', async () => {
    const rgb = gradient(16, 12);
    const png = await sharp(rgb, { raw: { width: 16, height: 12, channels: 3 } }).png().toBuffer();
    const frame = await decodeColour(png, { width: 16, height: 12 });
    expect([frame.width, frame.height, frame.data.length]).toEqual([16, 12, 16 * 12 * 3]);
    expect(Buffer.from(frame.data).equals(rgb)).toBe(true);
  });

  it('lines up with the grey frame of decodeImage when resizing, and drops alpha', async () => {
    const rgb = gradient(64, 48);
    const rgba = Buffer.alloc(64 * 48 * 4);
    for (let i = 0; i < 64 * 48; i++) rgba.set([rgb[3 * i], rgb[3 * i + 1], rgb[3 * i + 2], 128], 4 * i);
    const png = await sharp(rgba, { raw: { width: 64, height: 48, channels: 4 } }).png().toBuffer();
    const colour = await decodeColour(png, { width: 32, height: 24 });
    // Red grows to the right and green downwards at the working size too (same orientation).
    expect(colour.data[3 * (12 * 32 + 31)]).toBeGreaterThan(colour.data[3 * (12 * 32 + 0)] + 200);
    expect(colour.data[3 * (23 * 32 + 16) + 1]).toBeGreaterThan(colour.data[3 * (0 * 32 + 16) + 1] + 200);
    expect(Math.abs(colour.data[3 * (5 * 32 + 5) + 2] - 90)).toBeLessThanOrEqual(1); // resampling with alpha premultiplied
    // A grey image gives R = G = B, equal to decodeImage's levels.
    const flat = await flatPng(20, 10, 77);
    const grey = await decodeImage(flat, { width: 20, height: 10 });
    const c = await decodeColour(flat, { width: 20, height: 10 });
    expect(Array.from(c.data.subarray(0, 6))).toEqual([77, 77, 77, 77, 77, 77]);
    expect(grey.data[0]).toBe(77);
  });

  it('refuses bad input with a FrameError naming it, as decodeImage does', async () => {
    await expect(decodeColour(Buffer.alloc(0), { width: 4, height: 4, name: 'a.png' })).rejects.toThrow('a.png: zero-byte file');
    const cut = await truncatedJpeg();
    await expect(decodeColour(cut, { width: 4, height: 4, name: 'b.jpg' })).rejects.toThrow(/^b\.jpg: truncated or corrupt image \(.*premature end/i);
    await expect(decodeColour(pngBomb(), { width: 4, height: 4, name: 'c.png' })).rejects.toThrow(/c\.png: image declares 100000×100000 .*more than limitInputPixels/);
    await expect(decodeColour(Buffer.from('not an image at all'), { width: 4, height: 4, name: 'd.png' })).rejects.toBeInstanceOf(FrameError);
    await expect(decodeColour(await flatPng(4, 4, 1), { width: 0, height: 4 })).rejects.toThrow(/width must be a whole number/);
  });
});

describe('readImageFolder with colour', () => {
  let dir: string;
  beforeAll(async () => {
    dir = await makeTempDir();
    await writeFile(join(dir, 'frame2.png'), await sharp(gradient(40, 30), { raw: { width: 40, height: 30, channels: 3 } }).png().toBuffer());
    await writeFile(join(dir, 'frame10.png'), await flatPng(40, 30, 200));
    await writeFile(join(dir, 'frame3.jpg'), Buffer.alloc(0));
  });
  afterAll(() => removeTempDir(dir));

  it('pairs the grey frames of readImageFolder with their colour frames, keeping its order and errors', async () => {
    const items = await collect(readImageFolder(dir, { longSide: 20, colour: true }));
    const grey = await collect(readImageFolder(dir, { longSide: 20 }));
    expect(items.map((i) => i.name)).toEqual(['frame2.png', 'frame3.jpg', 'frame10.png']);
    expect(items.map((i) => i.name)).toEqual(grey.map((i) => i.name));
    expect(items[1].error?.message).toMatch(/frame3\.jpg: zero-byte file/);
    for (const k of [0, 2]) {
      const item = items[k];
      expect(Array.from(item.frame!.data)).toEqual(Array.from(grey[k].frame!.data));
      expect([item.colour!.width, item.colour!.height]).toEqual([20, 15]);
    }
    expect(Array.from(items[2].colour!.data.subarray(0, 3))).toEqual([200, 200, 200]);
  });
});
