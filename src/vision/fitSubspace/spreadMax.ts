/** σ_i = max(floor, largest √(sumSq / divisor) within `radius` pixels of i). */
export function spreadMax(
  sumSq: Float64Array,
  divisor: number,
  floor: number,
  size: { width: number; height: number },
  radius: number,
): Float32Array {
  const { width, height } = size;
  const sigma = new Float32Array(sumSq.length);
  for (let i = 0; i < sumSq.length; i++) sigma[i] = Math.sqrt(sumSq[i] / divisor);
  const rows = new Float32Array(sigma.length);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let m = 0;
      for (let u = Math.max(0, x - radius); u <= Math.min(width - 1, x + radius); u++) m = Math.max(m, sigma[y * width + u]);
      rows[y * width + x] = m;
    }
  }
  const noise = new Float32Array(sigma.length);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let m = floor;
      for (let v = Math.max(0, y - radius); v <= Math.min(height - 1, y + radius); v++) m = Math.max(m, rows[v * width + x]);
      noise[y * width + x] = m;
    }
  }
  return noise;
}
