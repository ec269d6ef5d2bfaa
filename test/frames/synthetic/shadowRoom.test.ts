/**
 * Checks of our own synthetic shadow room (invented scene, no real people): what it promises to
 * draw. The colour-to-grey conversion is checked against libvips (sharp), the library the grey
 * pipeline decodes with.
 */
import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { decodeImage } from '../../../src/frames/decodeImage.ts';
import { createReadingRoom } from '../../../src/frames/synthetic/readingRoom.ts';
import { createShadowRoom } from '../../../src/frames/synthetic/shadowRoom.ts';

const scene = createShadowRoom({});
const clean = createShadowRoom({ noise: 0 });
const room = createReadingRoom({});
const cleanRoom = createReadingRoom({ noise: 0 });
const frames = [300, 640, 1180];

// check: sRGB transfer function of IEC 61966-2-1 and the BT.709 luminance weights on linear
// light, the conversion libvips applies for colourspace B_W (see test/frames/decodeImage.test.ts).
const toLinear = (c: number) => (c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4);
const toSrgb = (l: number) => (l <= 0.0031308 ? 12.92 * l : 1.055 * l ** (1 / 2.4) - 0.055);
const greyOf = (r: number, g: number, b: number) => 255 * toSrgb(0.2126 * toLinear(r / 255) + 0.7152 * toLinear(g / 255) + 0.0722 * toLinear(b / 255));

describe('shadow room', () => {
  it('renders colour frames whose grey, as sharp converts it, is the grey frame', async () => {
    for (const t of frames) {
      const { frame, colour } = scene.colourFrameAt(t);
      expect(Array.from(scene.frameAt(t).frame.data)).toEqual(Array.from(frame.data));
      // check: libvips (sharp) greyscale of the colour frame, through decodeImage, in memory.
      const png = await sharp(Buffer.from(colour.data), { raw: { width: scene.width, height: scene.height, channels: 3 } }).png().toBuffer();
      const decoded = await decodeImage(png, { width: scene.width, height: scene.height });
      let worst = 0;
      let worstFormula = 0;
      for (let i = 0; i < frame.data.length; i++) {
        worst = Math.max(worst, Math.abs(decoded.data[i] - frame.data[i]));
        worstFormula = Math.max(worstFormula, Math.abs(greyOf(colour.data[3 * i], colour.data[3 * i + 1], colour.data[3 * i + 2]) - frame.data[i]));
      }
      expect(worst).toBeLessThanOrEqual(1);
      expect(worstFormula).toBeLessThanOrEqual(1);
    }
    const empty = scene.emptyColourFrameAt(90);
    expect(Array.from(empty.frame.data)).toEqual(Array.from(room.emptyFrameAt(90).data));
    // It is colour: the red rug under the tables and the blue-grey carpet differ in chromaticity.
    const r = (x: number, y: number) => {
      const i = 3 * (Math.round(y * scene.height) * scene.width + Math.round(x * scene.width));
      const [R, G, B] = empty.colour.data.subarray(i, i + 3);
      return R / (R + G + B);
    };
    expect(r(0.9, 0.93) - r(0.2, 0.93)).toBeGreaterThan(0.05);
  });

  it('counts as the reading room, and casts shadows only on the background, darker and of the same chromaticity', () => {
    for (const t of frames) {
      const { frame, colour, truth, labels } = clean.colourFrameAt(t);
      expect(truth).toEqual(room.frameAt(t).truth);
      const bare = cleanRoom.frameAt(t).frame.data; // the same picture without shadows
      const emptyGrey = cleanRoom.emptyFrameAt(t).data;
      const emptyColour = clean.emptyColourFrameAt(t).colour.data;
      let shadows = 0;
      for (let p = 0; p < labels.length; p++) {
        const person = bare[p] !== emptyGrey[p];
        // Shadows only darken, and never where a person is drawn.
        expect(frame.data[p]).toBeLessThanOrEqual(bare[p]);
        if (person) expect(frame.data[p]).toBe(bare[p]);
        if (labels[p] === 255) expect(Math.abs(bare[p] - emptyGrey[p])).toBeGreaterThan(4);
        if (labels[p] !== 50) continue;
        shadows++;
        expect(person).toBe(false);
        const ratio = frame.data[p] / emptyGrey[p];
        expect(ratio).toBeGreaterThanOrEqual(0.54);
        expect(ratio).toBeLessThan(1);
        // Same normalised chromaticity r = R / (R + G + B), g = G / (R + G + B) as the empty scene.
        const [r, g, b] = [colour.data[3 * p], colour.data[3 * p + 1], colour.data[3 * p + 2]];
        const [er, eg, eb] = [emptyColour[3 * p], emptyColour[3 * p + 1], emptyColour[3 * p + 2]];
        if (r + g + b > 60) {
          expect(Math.abs(r / (r + g + b) - er / (er + eg + eb))).toBeLessThan(0.02);
          expect(Math.abs(g / (r + g + b) - eg / (er + eg + eb))).toBeLessThan(0.02);
        }
      }
      // Every visitor on the floor casts one: hundreds of shadow pixels in these busy frames.
      expect(shadows).toBeGreaterThan(300);
    }
  });
});
