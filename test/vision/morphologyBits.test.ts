import { describe, expect, it } from 'vitest';
import type { Mask } from '../../src/domain/frame.ts';
import type { ElementShape } from '../../src/vision/elementShape.ts';
import { packMask, popcount32, unpackMask } from '../../src/vision/bitMask.ts';
import { setKernelsEnabled } from '../../src/vision/learningKernels.ts';
import { morphologyBitMask, morphologyBits, type MorphologyStep } from '../../src/vision/morphologyBits.ts';
import { morphologyKernels } from '../../src/vision/morphologyKernels.ts';
import { mulberry } from '../helpers/random.ts';

/**
 * Direct reference from the definitions (Serra 1982; opencv's default border): a pixel of an
 * erosion is set when every pixel of the element inside the image is set (outside counts as
 * set), of a dilation when any is (outside counts as unset). The square element is every offset
 * with |dx|, |dy| ≤ r; the cross those with dx = 0 or dy = 0.
 */
function reference(mask: Mask, steps: readonly MorphologyStep[], radius: number, shape: ElementShape): Uint8Array {
  const { width, height } = mask;
  let current = Uint8Array.from(mask.data, (v) => (v === 0 ? 0 : 1));
  for (const step of steps) {
    const next = new Uint8Array(width * height);
    for (let y = 0; y < height; y++) {
      for (let x = 0; x < width; x++) {
        let all = true;
        let any = false;
        for (let dy = -radius; dy <= radius; dy++) {
          for (let dx = -radius; dx <= radius; dx++) {
            if (shape === 'cross' && dx !== 0 && dy !== 0) continue;
            const u = x + dx;
            const v = y + dy;
            if (u < 0 || u >= width || v < 0 || v >= height) continue;
            if (current[v * width + u]) any = true;
            else all = false;
          }
        }
        next[y * width + x] = (step === 'erode' ? all : any) ? 1 : 0;
      }
    }
    current = next;
  }
  return current;
}

describe('morphologyBits', () => {
  it('opens away a lone pixel and keeps a 3×3 block', () => {
    // Worked by hand, as in openMask's doc comment.
    const rows = ['#....', '..###', '..###', '..###'];
    const mask: Mask = { width: 5, height: 4, data: Uint8Array.from(rows.join(''), (c) => (c === '#' ? 1 : 0)) };
    const opened = morphologyBits(mask, { steps: ['erode', 'dilate'] });
    expect(Array.from(opened.data).join('')).toBe('00000' + '00111' + '00111' + '00111');
  });

  it('agrees with the definitions across word boundaries, wide radii and step sequences', () => {
    // check: direct evaluation of the definitions above (simple reference implementation).
    const rand = mulberry(77);
    const sequences: MorphologyStep[][] = [[], ['erode'], ['dilate'], ['erode', 'dilate'], ['dilate', 'erode'], ['dilate', 'dilate', 'erode']];
    for (const width of [1, 5, 31, 32, 33, 63, 64, 65, 70]) {
      for (const radius of [0, 1, 2, 5, 31, 32, 33]) {
        for (const shape of ['square', 'cross'] as const) {
          const steps = sequences[Math.floor(rand() * sequences.length)];
          const height = 1 + Math.floor(rand() * 12);
          const density = rand();
          const mask: Mask = { width, height, data: Uint8Array.from({ length: width * height }, () => (rand() < density ? (rand() < 0.8 ? 1 : 200) : 0)) };
          const ours = morphologyBits(mask, { steps, radius, shape });
          expect(Array.from(ours.data), `${width}×${height} r${radius} ${shape} ${steps.join(',')}`).toEqual(
            Array.from(reference(mask, steps, radius, shape)),
          );
        }
      }
    }
  });

  it('gives the same result with a scratch at any byte offset, too short a scratch, or none', () => {
    const rand = mulberry(3);
    const width = 45;
    const height = 20;
    const mask: Mask = { width, height, data: Uint8Array.from({ length: width * height }, () => (rand() < 0.5 ? 1 : 0)) };
    const want = Array.from(reference(mask, ['dilate', 'erode'], 2, 'square'));
    const backing = new Uint8Array(width * height + 8).fill(0xff);
    for (const offset of [0, 1, 2, 3]) {
      const out: Mask = { width, height, data: new Uint8Array(width * height).fill(5) };
      const scratch = backing.subarray(offset, offset + width * height);
      expect(morphologyBits(mask, { steps: ['dilate', 'erode'], radius: 2, out, scratch })).toBe(out);
      expect(Array.from(out.data)).toEqual(want);
    }
    expect(Array.from(morphologyBits(mask, { steps: ['dilate', 'erode'], radius: 2, scratch: new Uint8Array(4) }).data)).toEqual(want);
    expect(Array.from(morphologyBits(mask, { steps: ['dilate', 'erode'], radius: 2 }).data)).toEqual(want);
  });

  it('handles empty images', () => {
    expect(morphologyBits({ width: 0, height: 0, data: new Uint8Array(0) }, { steps: ['erode'] }).data.length).toBe(0);
    expect(morphologyBits({ width: 3, height: 0, data: new Uint8Array(0) }, { steps: ['dilate'] }).data.length).toBe(0);
  });
});

describe('morphologyBitMask', () => {
  it('agrees with the definitions on packed masks, ignores the input padding, and may write over its input', () => {
    // check: direct evaluation of the definitions above (simple reference implementation).
    const rand = mulberry(91);
    for (const width of [1, 31, 32, 33, 65, 100]) {
      for (const radius of [0, 1, 2, 33]) {
        for (const shape of ['square', 'cross'] as const) {
          const steps: MorphologyStep[] = rand() < 0.5 ? ['erode', 'dilate'] : ['dilate', 'erode'];
          const height = 1 + Math.floor(rand() * 10);
          const mask: Mask = { width, height, data: Uint8Array.from({ length: width * height }, () => (rand() < 0.5 ? 1 : 0)) };
          const packed = packMask(mask);
          // Padding bits set: they must not leak into the result.
          if (width % 32 !== 0) for (let w = packed.words - 1; w < packed.data.length; w += packed.words) packed.data[w] |= ~((1 << (width % 32)) - 1);
          const before = Int32Array.from(packed.data);
          const result = morphologyBitMask(packed, { steps, radius, shape });
          expect(packed.data).toEqual(before);
          const want = Array.from(reference(mask, steps, radius, shape));
          expect(Array.from(unpackMask(result).data), `${width}×${height} r${radius} ${shape} ${steps.join(',')}`).toEqual(want);
          expect(Array.from(unpackMask(morphologyBitMask(packed, { steps, radius, shape, out: packed })).data)).toEqual(want);
        }
      }
    }
  });
});

describe('packMask and unpackMask', () => {
  it('put pixel x of row y at bit x mod 32 of word y · ⌈width/32⌉ + ⌊x/32⌋, and round-trip', () => {
    const mask: Mask = { width: 35, height: 2, data: new Uint8Array(70) };
    mask.data[0] = 1; // (0, 0): word 0, bit 0
    mask.data[33] = 7; // (33, 0): word 1, bit 1 (any non-zero byte is set)
    mask.data[35 + 31] = 1; // (31, 1): word 2, bit 31
    const packed = packMask(mask);
    expect(packed.words).toBe(2);
    expect(Array.from(packed.data)).toEqual([1, 2, 1 << 31, 0]);
    expect(Array.from(unpackMask(packed).data)).toEqual(Array.from(mask.data, (v) => (v === 0 ? 0 : 1)));
  });

  it('counts the set bits of a word', () => {
    // check: common practice — popcount of 0, −1 (all 32 bits), 0x80000001 and 0x0f0f0f0f.
    expect([0, -1, 0x80000001 | 0, 0x0f0f0f0f].map(popcount32)).toEqual([0, 32, 2, 16]);
  });
});

describe('morphologyKernels', () => {
  it('gives morphologyBitMask’s result bit for bit, for chains of square steps at any width', () => {
    // check: direct evaluation of the definitions above (simple reference implementation).
    const rand = mulberry(123);
    for (const width of [1, 5, 31, 32, 33, 64, 100, 129, 320]) {
      const height = 1 + Math.floor(rand() * 30);
      const kernels = morphologyKernels({ width, height })!;
      expect(kernels).toBeDefined();
      for (let trial = 0; trial < 4; trial++) {
        const steps = Array.from({ length: 1 + Math.floor(rand() * 4) }, () => ({ step: (rand() < 0.5 ? 'erode' : 'dilate') as MorphologyStep, radius: Math.floor(rand() * 4) }));
        if (trial === 3) steps.push({ step: 'dilate', radius: 31 });
        const mask: Mask = { width, height, data: Uint8Array.from({ length: width * height }, () => (rand() < 0.5 ? 1 : 0)) };
        const packed = packMask(mask);
        if (width % 32 !== 0) for (let w = packed.words - 1; w < packed.data.length; w += packed.words) packed.data[w] |= ~((1 << (width % 32)) - 1);
        let want = mask;
        for (const { step, radius } of steps) want = { width, height, data: reference(want, [step], radius, 'square') };
        const got = kernels.apply(packed, steps);
        expect(Array.from(unpackMask(got).data), `${width}×${height} ${JSON.stringify(steps)}`).toEqual(Array.from(want.data));
      }
    }
  });

  it('is not offered with the kernels turned off, and names a radius it cannot take', () => {
    setKernelsEnabled(false);
    try {
      expect(morphologyKernels({ width: 10, height: 10 })).toBeUndefined();
    } finally {
      setKernelsEnabled(true);
    }
    const kernels = morphologyKernels({ width: 10, height: 10 })!;
    expect(() => kernels.apply(packMask({ width: 10, height: 10, data: new Uint8Array(100) }), [{ step: 'erode', radius: 32 }])).toThrow(/radius: expected a whole number 0..31, got 32/);
  });
});
