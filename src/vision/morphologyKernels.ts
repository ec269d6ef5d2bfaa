import { outputBitMask, type BitMask } from './bitMask.ts';
import { countingModule } from './countingKernels.ts';
import { kernelsEnabled } from './learningKernels.ts';
import type { MorphologyStep } from './morphologyBits.ts';

/** One step of a chain: an erosion or dilation by the (2 · radius + 1)² square. */
export interface SquareStep {
  readonly step: MorphologyStep;
  /** Half-size of the square, a whole number 0..31 (inclusive). */
  readonly radius: number;
}

/** A chain of square erosions and dilations on packed masks of one size, in WebAssembly SIMD. */
export interface MorphologyKernels {
  /** Bytes of the kernels' own memory. */
  readonly memoryBytes: number;
  /** Applies the steps in order to `mask` (not changed) and writes the result to `out` (may be `mask`). */
  apply(mask: BitMask, steps: readonly SquareStep[], out?: BitMask): BitMask;
}

interface Exports {
  morph(src: number, dst: number, tmp: number, rows: number, rowBytes: number, vectors: number, words: number, keep: number, radius: number, erode: number): void;
}

/** The largest radius the kernel takes: a shift stays within one neighbouring word. */
export const MAX_KERNEL_RADIUS = 31;

/**
 * morphologyBitMask for the square element, four words per instruction: the `morph` kernel of
 * kernels/wat/counting/morph.wat, the same row-then-column method and border (van den Boomgaard
 * & van Balen 1992; opencv's default border), so the same result bit for bit. The mask is copied
 * into the kernels' own memory once per call, every step runs there, and the result is copied out.
 *
 * Memory: three planes of height rows of ⌈words / 4⌉ + 1 vectors (the extra one a guard), 64 KiB
 * for 320×240.
 *
 * Returns undefined where the kernels cannot run (no WebAssembly SIMD, or turned off with
 * setKernelsEnabled(false)); the caller then takes morphologyBitMask.
 */
export function morphologyKernels(size: { width: number; height: number }): MorphologyKernels | undefined {
  const { width, height } = size;
  if (!kernelsEnabled()) return undefined;
  const module = countingModule();
  if (module === null) return undefined;
  const words = (width + 31) >>> 5;
  const vectors = Math.ceil(words / 4);
  const rowBytes = 16 * (vectors + 1);
  const planeBytes = rowBytes * height + 16;
  // Three planes, each with the 16 guard bytes before its first row.
  const planes = [16, 16 + planeBytes, 16 + 2 * planeBytes];
  let memory: WebAssembly.Memory;
  let run: Exports;
  try {
    memory = new WebAssembly.Memory({ initial: Math.max(1, Math.ceil((16 + 3 * planeBytes) / 65536)) });
    run = new WebAssembly.Instance(module, { env: { memory } }).exports as unknown as Exports;
  } catch {
    return undefined;
  }
  const used = width & 31;
  const keep = used === 0 ? -1 : (1 << used) - 1;
  const wordsOf = (plane: number) => new Int32Array(memory.buffer, plane, (rowBytes * height) / 4);
  const views = planes.map(wordsOf);
  const rowWords = rowBytes / 4;
  return {
    memoryBytes: memory.buffer.byteLength,
    apply(mask, steps, out) {
      if (mask.width !== width || mask.height !== height) throw new RangeError(`mask is ${mask.width}×${mask.height}, expected ${width}×${height}`);
      for (const { radius } of steps) {
        if (!(Number.isInteger(radius) && radius >= 0 && radius <= MAX_KERNEL_RADIUS)) throw new RangeError(`radius: expected a whole number 0..${MAX_KERNEL_RADIUS}, got ${String(radius)}`);
      }
      const result = outputBitMask(width, height, out);
      let src = 0;
      for (let y = 0; y < height; y++) views[src].set(mask.data.subarray(y * words, y * words + words), y * rowWords);
      for (const { step, radius } of steps) {
        const dst = src === 0 ? 1 : 0;
        run.morph(planes[src], planes[dst], planes[2], height, rowBytes, vectors, words, keep, radius, step === 'erode' ? 1 : 0);
        src = dst;
      }
      for (let y = 0; y < height; y++) result.data.set(views[src].subarray(y * rowWords, y * rowWords + words), y * words);
      return result;
    },
  };
}
