/**
 * A sliding window over the last `window` values with its median or mean: per-frame counts jump
 * when a blob splits or merges for a frame; the median of a few frames ignores such one-frame
 * glitches (a running median filter, Tukey 1977) while following a real change after half a
 * window.
 *
 * Example: window 3, values 2, 2, 5, 2 → medians 2, 2, 2, 2; means 2, 2, 3, 3.
 */
export interface SlidingWindow {
  push(value: number): number;
  reset(): void;
}

export function slidingWindow(window: number, method: 'median' | 'mean'): SlidingWindow {
  if (!(Number.isInteger(window) && window >= 1)) throw new RangeError(`window must be a whole number ≥ 1, got ${window}`);
  const values = new Float64Array(window);
  const sorted = new Float64Array(window);
  let size = 0;
  let next = 0;
  return {
    push(value) {
      values[next] = value;
      next = (next + 1) % window;
      size = Math.min(size + 1, window);
      if (method === 'mean') {
        let s = 0;
        for (let i = 0; i < size; i++) s += values[i];
        return s / size;
      }
      sorted.set(values.subarray(0, size));
      const part = sorted.subarray(0, size).sort();
      return size % 2 === 1 ? part[(size - 1) / 2] : (part[size / 2 - 1] + part[size / 2]) / 2;
    },
    reset() {
      size = 0;
      next = 0;
    },
  };
}
