import { outputMask, type Mask } from '../domain/frame.ts';

/**
 * Checks the arguments shared by erode, dilate, openMask and closeMask and returns the mask to
 * write into. `scratchPlanes` is how many width × height bytes the scratch buffer must hold
 * (1 for one step, 2 for an opening or closing). Messages name the option and its unit.
 */
export function morphologyInput(
  mask: Mask,
  options: { radius: number; shape: string; out?: Mask; scratch?: Uint8Array },
  scratchPlanes: number,
): Mask {
  const { radius, shape, out, scratch } = options;
  const { width, height, data } = mask;
  if (!Number.isInteger(width) || width < 0 || !Number.isInteger(height) || height < 0) {
    throw new RangeError(`mask width and height must be non-negative integers, got ${width}×${height}`);
  }
  const n = width * height;
  if (!(data instanceof Uint8Array) || data.length !== n) {
    throw new RangeError(`mask.data must be a Uint8Array of length ${n} (${width}×${height}), got length ${data?.length}`);
  }
  if (!Number.isInteger(radius) || radius < 0) {
    throw new RangeError(`options.radius must be an integer ≥ 0 (pixels), got ${String(radius)}`);
  }
  if (shape !== 'square' && shape !== 'cross') {
    throw new RangeError(`options.shape must be 'square' or 'cross', got ${String(shape)}`);
  }
  const result = outputMask(width, height, out);
  if (overlaps(result.data, data)) throw new RangeError('options.out must not share memory with the input mask');
  if (scratch !== undefined) {
    const need = scratchPlanes * n;
    if (!(scratch instanceof Uint8Array) || scratch.length < need) {
      const times = scratchPlanes === 1 ? '' : ` (${scratchPlanes} × ${width}×${height})`;
      throw new RangeError(`options.scratch must be a Uint8Array of length at least ${need}${times}, got length ${scratch?.length}`);
    }
    if (overlaps(scratch, data) || overlaps(scratch, result.data)) {
      throw new RangeError('options.scratch must not share memory with the input mask or options.out');
    }
  }
  return result;
}

/** True when two byte arrays share at least one byte of memory. */
function overlaps(a: Uint8Array, b: Uint8Array): boolean {
  if (a.buffer !== b.buffer) return false;
  return a.byteOffset < b.byteOffset + b.byteLength && b.byteOffset < a.byteOffset + a.byteLength;
}
