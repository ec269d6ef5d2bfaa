import { readFileSync } from 'node:fs';
import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { buildGramWasm } from '../../scripts/buildKernels.ts';
import { gramMatrixSimd } from '../../src/vision/gramKernel.ts';
import { mulberry } from '../helpers/random.ts';

describe('gramMatrixSimd', () => {
  it('is the committed build of scripts/buildKernels.ts', async () => {
    const committed = new Uint8Array(readFileSync(new URL('../../src/vision/kernels/gram.wasm', import.meta.url)));
    expect(Buffer.from(await buildGramWasm()).equals(Buffer.from(committed))).toBe(true);
  });

  it('matches XᵀX in double precision, for sizes that are not multiples of the block', () => {
    const rand = mulberry(21);
    for (const [n, d] of [[1, 1], [3, 5], [7, 1023], [13, 3001]] as const) {
      const frames = Array.from({ length: n }, () => Float32Array.from({ length: d }, () => (rand() - 0.5) * 200));
      const gram = gramMatrixSimd(frames, d);
      expect(gram).toBeDefined();
      // check: ml-matrix mmul in double precision (an independent route to the same products)
      const x = new Matrix(frames.map((f) => Array.from(f)));
      const reference = x.mmul(x.transpose());
      for (let a = 0; a < n; a++) {
        for (let b = 0; b < n; b++) {
          const scale = Math.sqrt(reference.get(a, a) * reference.get(b, b));
          expect(Math.abs(gram![a * n + b] - reference.get(a, b)) / scale, `n ${n}, d ${d}, (${a}, ${b})`).toBeLessThan(1e-5);
        }
      }
    }
  });

  it('reuses its memory across calls of different sizes', () => {
    const small = [Float32Array.of(1, 2, 3)];
    const big = Array.from({ length: 9 }, (_, t) => new Float32Array(5000).fill(t + 1));
    expect(gramMatrixSimd(big, 5000)![8 * 9 + 8]).toBe(81 * 5000);
    expect(Array.from(gramMatrixSimd(small, 3)!)).toEqual([14]);
    expect(gramMatrixSimd(big, 5000)![1 * 9 + 2]).toBe(6 * 5000);
  });
});
