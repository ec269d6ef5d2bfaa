import { readFileSync } from 'node:fs';

/** Frames per block side of the kernel (see scripts/buildKernels.ts). */
const BLOCK = 4;
/** Pixels per tile whose products are summed in f32 lanes before they are added in f64. */
const TILE = 256;
/** Largest working memory the kernel is given, bytes; bigger learning sets take the JS loops. */
const MAX_BYTES = 1 << 30;

interface Kernel {
  readonly memory: WebAssembly.Memory;
  readonly gram: (frames: number, n: number, d: number, tile: number, out: number) => void;
}

let kernel: Kernel | null | undefined;

/** The kernel of this thread, instantiated on first use; null where WebAssembly SIMD is missing. */
function loadKernel(): Kernel | null {
  if (kernel !== undefined) return kernel;
  try {
    const bytes = readFileSync(new URL('./kernels/gram.wasm', import.meta.url));
    const memory = new WebAssembly.Memory({ initial: 1 });
    const instance = new WebAssembly.Instance(new WebAssembly.Module(bytes), { env: { memory } });
    kernel = { memory, gram: instance.exports.gram as Kernel['gram'] };
  } catch {
    kernel = null;
  }
  return kernel;
}

/**
 * G = XᵀX of the n centred frames (d pixels each) with the WebAssembly SIMD kernel built by
 * scripts/buildKernels.ts: blocks of 4×4 frame pairs, four pixels per instruction. Each product
 * is taken in single precision (the frames are Float32) and summed in four f32 lanes over tiles
 * of 256 pixels (64 products a lane), the tile sums then added in double precision: relative
 * errors of about 1e-6 in each entry, against 1e-7 in the frames themselves.
 *
 * Returns undefined when the kernel cannot run here (no WebAssembly SIMD, or a learning set
 * larger than 1 GiB of working memory): the caller then takes its JS loops. The kernel's memory
 * stays allocated for the thread's lifetime and is reused by the next call.
 */
export function gramMatrixSimd(centred: readonly Float32Array[], d: number): Float64Array | undefined {
  const k = loadKernel();
  const n = centred.length;
  if (k === null || n === 0) return undefined;
  const np = Math.ceil(n / BLOCK) * BLOCK;
  const dp = Math.ceil(d / 4) * 4;
  const frameBytes = np * dp * 4;
  const outBytes = np * np * 8;
  const bytes = frameBytes + outBytes;
  if (bytes > MAX_BYTES) return undefined;
  const pages = Math.ceil(bytes / 65536);
  const have = k.memory.buffer.byteLength / 65536;
  if (pages > have) k.memory.grow(pages - have);
  const heap = k.memory.buffer;
  const frames = new Float32Array(heap, 0, np * dp);
  for (let t = 0; t < np; t++) {
    const row = frames.subarray(t * dp, (t + 1) * dp);
    if (t < n) {
      row.set(centred[t].subarray(0, d));
      row.fill(0, d);
    } else row.fill(0);
  }
  const out = new Float64Array(heap, frameBytes, np * np);
  out.fill(0);
  k.gram(0, np, dp, TILE, frameBytes);
  const gram = new Float64Array(n * n);
  for (let a = 0; a < n; a++) {
    for (let b = 0; b <= a; b++) gram[a * n + b] = gram[b * n + a] = out[a * np + b];
  }
  return gram;
}
