/** The per-pixel median over the frames. */
export function temporalMedian(frames: readonly Float32Array[], d: number): Float32Array {
  const column = new Float32Array(frames.length);
  const median = new Float32Array(d);
  for (let i = 0; i < d; i++) {
    for (let t = 0; t < frames.length; t++) column[t] = frames[t][i];
    median[i] = medianOf(column);
  }
  return median;
}

/** Median of the values (reorders them). */
export function medianOf(values: Float32Array): number {
  values.sort();
  const n = values.length;
  return n % 2 === 1 ? values[(n - 1) / 2] : (values[n / 2 - 1] + values[n / 2]) / 2;
}
