/**
 * Checks of the options the live sources share, at the edge, with messages naming the field.
 */
import type { Size } from '../workingSize.ts';

/** Throws unless `size` is {width, height} of whole numbers ≥ 1 (the model's working size). */
export function checkSize(size: unknown, field = 'size'): asserts size is Size {
  const { width, height } = (size ?? {}) as Partial<Size>;
  if (!(Number.isInteger(width) && (width as number) >= 1 && Number.isInteger(height) && (height as number) >= 1)) {
    throw new RangeError(`${field} must be {width, height} in whole pixels ≥ 1, got ${JSON.stringify(size)}`);
  }
}

/** Throws unless `value` is a whole number ≥ `min`. */
export function checkWhole(value: unknown, field: string, min: number): asserts value is number {
  if (!(typeof value === 'number' && Number.isInteger(value) && value >= min)) {
    throw new RangeError(`${field} must be a whole number ≥ ${min}, got ${String(value)}`);
  }
}

/** Throws unless `value` is a non-empty string. */
export function checkText(value: unknown, field: string): asserts value is string {
  if (!(typeof value === 'string' && value !== '')) throw new TypeError(`${field} must be a non-empty string, got ${String(value)}`);
}
