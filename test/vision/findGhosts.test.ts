import { describe, expect, it } from 'vitest';
import { createFrame, createMask, type GreyFrame, type Mask } from '../../src/domain/frame.ts';
import { boundaryEdges, findGhosts } from '../../src/vision/findGhosts.ts';
import { labelComponents } from '../../src/vision/labelComponents.ts';
import { mulberry } from '../helpers/random.ts';

/** A 7×7 picture, 0 everywhere but a 3×3 square of 100 at columns and rows 2..4 (when `square`). */
function tiny(square: boolean): GreyFrame {
  const frame = createFrame(7, 7);
  if (square) for (let y = 2; y <= 4; y++) for (let x = 2; x <= 4; x++) frame.data[y * 7 + x] = 100;
  return frame;
}

function squareMask(): Mask {
  const mask = createMask(7, 7);
  for (let y = 2; y <= 4; y++) for (let x = 2; x <= 4; x++) mask.data[y * 7 + x] = 1;
  return mask;
}

describe('boundaryEdges', () => {
  it('measures the outline worked by hand on a 7×7 picture', () => {
    // check: worked by hand. The outline is the square's 8 pixels other than its centre. At the
    // corner (2, 2) the central differences are |I(3,2) − I(1,2)| + |I(2,3) − I(2,1)| = 100 + 100
    // = 200, the largest any pixel has (values are 0 and 100), and every outline pixel has a
    // corner in its 3×3 neighbourhood: 200 along the outline of the picture with the square, 0
    // along that of the flat picture. The surround (2 to 3 pixels out, inside the 7×7 less its
    // 2-pixel border) is empty: NaN.
    const mask = squareMask();
    const [blob] = labelComponents(mask).blobs;
    const gone = boundaryEdges(tiny(false), tiny(true).data, mask, blob);
    expect(gone).toEqual({ pixels: 8, frame: 0, background: 200, surround: Number.NaN });
    const come = boundaryEdges(tiny(true), tiny(false).data, mask, blob);
    expect(come).toMatchObject({ pixels: 8, frame: 200, background: 0 });
  });

  it('refuses pictures of different sizes, naming them', () => {
    const mask = squareMask();
    const [blob] = labelComponents(mask).blobs;
    expect(() => boundaryEdges(createFrame(8, 7), tiny(false).data, mask, blob)).toThrow(/8×7.*7×7/);
  });
});

describe('findGhosts', () => {
  // Our own scenario: a textured floor (uniform noise ±12 grey levels around 120) with sensor
  // noise, and a dark figure (grey 40, an 8×20 rectangle with rounded ends) at one place.
  const width = 64;
  const height = 48;
  const random = mulberry(7);
  const floor = Float32Array.from({ length: width * height }, () => 120 + 24 * (random() - 0.5));
  const figure = (x: number, y: number) => (x - 30) ** 2 / 16 + (y - 24) ** 2 / 100 <= 1;
  function picture(withFigure: boolean): GreyFrame {
    const frame = createFrame(width, height);
    for (let y = 0; y < height; y++) {
      for (let x = 0; x < width; x++) {
        const p = y * width + x;
        frame.data[p] = (withFigure && figure(x, y) ? 40 : floor[p]) + 4 * (random() - 0.5);
      }
    }
    return frame;
  }
  const mask = createMask(width, height);
  for (let y = 0; y < height; y++) for (let x = 0; x < width; x++) mask.data[y * width + x] = figure(x, y) ? 1 : 0;
  const { blobs } = labelComponents(mask);

  it('calls a figure that is in the background and not in the frame a ghost', () => {
    // check: common practice — what has gone leaves its outline in the background, not in the frame.
    expect(findGhosts(picture(false), picture(true).data, mask, blobs)).toHaveLength(1);
  });

  it('does not call a figure that has come a ghost, whether the background is bare or shows it blurred', () => {
    expect(findGhosts(picture(true), picture(false).data, mask, blobs)).toHaveLength(0);
    // A blurred trace of the figure in the background (half its contrast): the frame's outline is
    // still far stronger than the floor's texture around it.
    const trace = picture(false).data.map((v, p) => (mask.data[p] ? (v + 40) / 2 : v));
    expect(findGhosts(picture(true), trace, mask, blobs)).toHaveLength(0);
  });

  it('calls a blurred trace that has gone a ghost: the frame shows no edge of its own there', () => {
    const trace = picture(false).data.map((v, p) => (mask.data[p] ? 0.8 * v + 0.2 * 40 : v));
    expect(findGhosts(picture(false), trace, mask, blobs)).toHaveLength(1);
  });

  it('leaves out blobs below the least area and refuses bad options, naming them', () => {
    expect(findGhosts(picture(false), picture(true).data, mask, blobs, { minArea: blobs[0].area + 1 })).toHaveLength(0);
    expect(() => findGhosts(picture(false), floor, mask, blobs, { ratio: 1 })).toThrow(/ratio/);
    expect(() => findGhosts(picture(false), floor, mask, blobs, { surroundRatio: 0 })).toThrow(/surroundRatio/);
    expect(() => findGhosts(picture(false), floor, mask, blobs, { minEdge: 0 })).toThrow(/minEdge/);
  });
});

describe('repairedModel', () => {
  it('adds what clearing ghosts changed to a copy of the learned mean, and keeps the model when nothing was cleared', async () => {
    const { repairedModel } = await import('../../src/counting/findPersonSize.ts');
    // check: worked by hand — mean [10, 20, 30] with repair [0, −5, 0] gives [10, 15, 30], one pixel repaired.
    const model = { width: 3, height: 1, components: 0, mean: Float32Array.of(10, 20, 30), basis: new Float32Array(0) } as unknown as Parameters<typeof repairedModel>[0];
    const { model: repaired, pixels } = repairedModel(model, Float32Array.of(0, -5, 0));
    expect(pixels).toBe(1);
    expect([...repaired.mean]).toEqual([10, 15, 30]);
    expect([...model.mean]).toEqual([10, 20, 30]);
    expect(repairedModel(model, new Float32Array(3)).model).toBe(model);
  });
});
