import { outputMask, type GreyFrame, type Mask } from '../domain/frame.ts';

export interface ClearLightChangesOptions {
  /** Half-size of the square window compared around each pixel, pixels (whole number ≥ 1); default 3 (7×7). */
  radius?: number;
  /** Smallest normalised cross-correlation of frame and background in the window for a change of light (−1..1, inclusive); default 0.8. */
  minCorrelation?: number;
  /** Brightness ratio frame ÷ background a change of light may have, both bounds inclusive; default [0.35, 3]. */
  gain?: readonly [number, number];
  /**
   * Where the background has no texture to compare (its standard deviation in the window at most
   * `flatLevel` noise levels), is a uniform change of brightness light (`'light'`) or left as it
   * was (`'keep'`)? Default `'keep'`: a plain shirt over a plain floor looks just like a shadow.
   */
  flat?: 'light' | 'keep';
  /** Background texture below this many noise levels (standard deviation in the window) is flat; default 2. */
  flatLevel?: number;
  /** Mask to write into (same size); default a new one. */
  out?: Mask;
  /** Work array for the summed-area tables, length at least 5 (width + 1)(height + 1); default a new one per call. */
  scratch?: Float64Array;
}

/**
 * Clears the set pixels of `candidates` whose change from `background` is a change of light, not
 * something in front of it: around the pixel, the frame is the background's texture scaled by a
 * brightness ratio (a shadow, a patch of sun, a lamp switched on), so the two correlate. A person
 * replaces the texture instead. The test is the normalised cross-correlation of frame and
 * background over a small window, as in texture-based shadow and illumination detection
 * (D. Grest, J.-M. Frahm & R. Koch, "A color similarity measure for robust shadow removal in
 * real time", VMV 2003; J. C. S. Jacques Jr., C. R. Jung & S. R. Musse, "Background subtraction
 * and shadow detection in grayscale video sequences", SIBGRAPI 2005), with the brightness ratio
 * (the window's mean frame ÷ mean background) held to `gain`. Window sums are summed directly
 * around each candidate when there are few (under 2 / (2·radius + 1)² of the pixels; the window
 * slides along runs of candidates, a column in and a column out), else taken from summed-area
 * tables (Crow 1984) over the whole frame, whose cost does not grow with the window.
 *
 * `noise` is the per-pixel noise level (grey levels) that tells texture from flat background.
 *
 * Example: background rows of stripes 80/120, frame the same stripes at 0.6 (48/72, a shadow),
 * every pixel a candidate: all are cleared (correlation 1, ratio 0.6); a frame of uniform 30
 * there keeps them all (no correlation with the stripes).
 */
export function clearLightChanges(
  frame: GreyFrame,
  background: GreyFrame,
  candidates: Mask,
  noise: Float32Array,
  options: ClearLightChangesOptions = {},
): Mask {
  const { radius = 3, minCorrelation = 0.8, gain = [0.35, 3], flat = 'keep', flatLevel = 2, out, scratch } = options;
  const { width, height } = frame;
  if (background.width !== width || background.height !== height || candidates.width !== width || candidates.height !== height || noise.length !== width * height) {
    throw new RangeError(`frame, background, candidates and noise must all be ${width}×${height}`);
  }
  if (!(Number.isInteger(radius) && radius >= 1)) throw new RangeError(`radius must be a whole number ≥ 1, got ${radius}`);
  const result = outputMask(width, height, out);
  result.data.set(candidates.data);
  const f = frame.data;
  const m = background.data;
  const c = candidates.data;
  let count = 0;
  for (let i = 0; i < c.length; i++) count += c[i] !== 0 ? 1 : 0;
  if (count === 0) return result;
  const side = 2 * radius + 1;
  // Few candidates (the usual frame): each window summed directly, cheaper than the five tables
  // over the whole frame; many: the tables. The same sums either way, up to rounding.
  if (count * side * side < 2 * c.length) {
    // Along a run of candidates in a row the window slides by one column: its five sums change by
    // one column's sums in and one out, so each column is summed once per run, not once per pixel.
    const columns = new Float64Array(5 * width);
    for (let y = 0; y < height; y++) {
      const y0 = Math.max(0, y - radius);
      const y1 = Math.min(height, y + radius + 1);
      const rows = y1 - y0;
      for (let x = 0; x < width; x++) {
        if (!c[y * width + x]) continue;
        let runEnd = x;
        while (runEnd + 1 < width && c[y * width + runEnd + 1]) runEnd++;
        const from = Math.max(0, x - radius);
        const to = Math.min(width, runEnd + radius + 1);
        for (let u = from; u < to; u++) {
          let tf = 0;
          let tm = 0;
          let tff = 0;
          let tmm = 0;
          let tfm = 0;
          for (let v = y0, k = y0 * width + u; v < y1; v++, k += width) {
            const a = f[k];
            const b = m[k];
            tf += a;
            tm += b;
            tff += a * a;
            tmm += b * b;
            tfm += a * b;
          }
          const o = 5 * u;
          columns[o] = tf;
          columns[o + 1] = tm;
          columns[o + 2] = tff;
          columns[o + 3] = tmm;
          columns[o + 4] = tfm;
        }
        let s0 = 0;
        let s1 = 0;
        let s2 = 0;
        let s3 = 0;
        let s4 = 0;
        let x0 = from;
        let x1 = Math.min(width, x + radius + 1);
        for (let u = x0; u < x1; u++) {
          s0 += columns[5 * u];
          s1 += columns[5 * u + 1];
          s2 += columns[5 * u + 2];
          s3 += columns[5 * u + 3];
          s4 += columns[5 * u + 4];
        }
        for (let p = x; ; p++) {
          if (isLight(s0, s1, s2, s3, s4, (x1 - x0) * rows, noise[y * width + p])) result.data[y * width + p] = 0;
          if (p === runEnd) break;
          // Slide to p + 1: column x1 comes in (if inside), column x0 leaves once the window is full on the left.
          if (x1 < width) {
            const o = 5 * x1;
            s0 += columns[o];
            s1 += columns[o + 1];
            s2 += columns[o + 2];
            s3 += columns[o + 3];
            s4 += columns[o + 4];
            x1++;
          }
          if (p + 1 - radius > x0) {
            const o = 5 * x0;
            s0 -= columns[o];
            s1 -= columns[o + 1];
            s2 -= columns[o + 2];
            s3 -= columns[o + 3];
            s4 -= columns[o + 4];
            x0++;
          }
        }
        x = runEnd;
      }
    }
    return result;
  }

  // Summed-area tables of f, m, f², m², f·m with a zero row and column in front, interleaved (the
  // five sums of an entry side by side, so that a lookup touches one place), over the rows the
  // candidates' windows reach only: a table started at row y₀ gives the same window sums there.
  let firstRow = height;
  let lastRow = -1;
  for (let i = 0; i < c.length; i++) {
    if (c[i]) {
      const y = (i / width) | 0;
      if (y < firstRow) firstRow = y;
      lastRow = y;
    }
  }
  const top = Math.max(0, firstRow - radius);
  const bottom = Math.min(height, lastRow + radius + 1);
  const w1 = width + 1;
  const size = w1 * (height + 1);
  if (scratch !== undefined && scratch.length < 5 * size) throw new RangeError(`scratch must hold at least ${5 * size} values, got ${scratch.length}`);
  const t = scratch ?? new Float64Array(5 * size);
  // Row `top` and column 0 are 0; every other entry of rows top + 1 … bottom is written below.
  t.fill(0, 5 * top * w1, 5 * (top + 1) * w1);
  for (let y = top; y < bottom; y++) {
    let rf = 0;
    let rm = 0;
    let rff = 0;
    let rmm = 0;
    let rfm = 0;
    let j = 5 * (y + 1) * w1;
    t[j] = t[j + 1] = t[j + 2] = t[j + 3] = t[j + 4] = 0;
    for (let x = 0, i = y * width; x < width; x++, i++) {
      const a = f[i];
      const b = m[i];
      rf += a;
      rm += b;
      rff += a * a;
      rmm += b * b;
      rfm += a * b;
      j += 5;
      const up = j - 5 * w1;
      t[j] = t[up] + rf;
      t[j + 1] = t[up + 1] + rm;
      t[j + 2] = t[up + 2] + rff;
      t[j + 3] = t[up + 3] + rmm;
      t[j + 4] = t[up + 4] + rfm;
    }
  }
  for (let y = firstRow; y <= lastRow; y++) {
    const y0 = Math.max(0, y - radius);
    const y1 = Math.min(height, y + radius + 1);
    for (let x = 0; x < width; x++) {
      const i = y * width + x;
      if (!c[i]) continue;
      const x0 = Math.max(0, x - radius);
      const x1 = Math.min(width, x + radius + 1);
      const n = (x1 - x0) * (y1 - y0);
      const a = 5 * (y1 * w1 + x1);
      const b = 5 * (y0 * w1 + x1);
      const e = 5 * (y1 * w1 + x0);
      const g = 5 * (y0 * w1 + x0);
      const light = isLight(
        t[a] - t[b] - t[e] + t[g],
        t[a + 1] - t[b + 1] - t[e + 1] + t[g + 1],
        t[a + 2] - t[b + 2] - t[e + 2] + t[g + 2],
        t[a + 3] - t[b + 3] - t[e + 3] + t[g + 3],
        t[a + 4] - t[b + 4] - t[e + 4] + t[g + 4],
        n,
        noise[i],
      );
      if (light) result.data[i] = 0;
    }
  }
  return result;

  /** The test on a window's sums of f, m, f², m² and f·m over its n pixels. */
  function isLight(tf: number, tm: number, tff: number, tmm: number, tfm: number, n: number, sigma: number): boolean {
    const mf = tf / n;
    const mm = tm / n;
    if (!(mm > 1)) return false;
    const ratio = mf / mm;
    if (ratio < gain[0] || ratio > gain[1]) return false;
    const vf = Math.max(0, tff / n - mf * mf);
    const vm = Math.max(0, tmm / n - mm * mm);
    const level = flatLevel * sigma;
    // No texture to compare: a flat frame there is a uniform change of brightness.
    if (vm <= level * level) return flat === 'light' && vf <= (level * ratio) ** 2;
    const cov = tfm / n - mf * mm;
    return vf > 0 && cov / Math.sqrt(vf * vm) >= minCorrelation;
  }
}
