import { wordsPerRow, type BitMask } from './bitMask.ts';
import { blobsFromSums, type Blob, type Connectivity } from './labelComponents.ts';
import { unionSets } from './unionFind.ts';

export interface LabelBitRunsOptions {
  /** Pixel adjacency, 4 or 8; default 8. */
  connectivity?: Connectivity;
  /**
   * Work buffers reusable across calls, from {@link createLabelBitRunsScratch}; arrays too short
   * for a mask are replaced by longer ones (in the object itself). Default: allocated per call.
   * Its contents on return are unspecified.
   */
  scratch?: LabelBitRunsScratch;
}

/**
 * Work buffers of {@link labelBitRuns}. A run is a maximal horizontal stretch of set pixels in one
 * row; runs are indexed 0, 1, ... in raster order. The run arrays share one length (the run
 * capacity), the label arrays another (the label capacity, counting the unused index 0).
 */
export interface LabelBitRunsScratch {
  /** Per run: first column, inclusive. */
  runStart: Int32Array;
  /** Per run: one past the last column (exclusive end). */
  runEnd: Int32Array;
  /** Per run: union–find parent (a run index ≤ its own), then, after flattening, its final label 1..count. */
  parent: Int32Array;
  /** Per row, and one more: index of the row's first run; length at least height + 1. */
  rowStart: Int32Array;
  /** Per label 1..count: number of pixels. */
  area: Int32Array;
  /** Per label: leftmost column, inclusive. */
  minX: Int32Array;
  /** Per label: rightmost column, inclusive. */
  maxX: Int32Array;
  /** Per label: top row, inclusive. */
  minY: Int32Array;
  /** Per label: bottom row, inclusive. */
  maxY: Int32Array;
  /** Per label: sum of the pixels' x (an exact integer). */
  sumX: Float64Array;
  /** Per label: sum of the pixels' y (an exact integer). */
  sumY: Float64Array;
}

/** Most runs a row `width` pixels wide can hold: set and unset pixels alternating, ⌈width / 2⌉. */
function maxRunsPerRow(width: number): number {
  return (width + 1) >>> 1;
}

/**
 * Allocates work buffers for {@link labelBitRuns} that hold the worst case of a `width` × `height`
 * mask, ⌈width / 2⌉ · height runs (and as many labels), so that no mask of that size or smaller
 * makes a call allocate anything but its result. Cost: 48 bytes per run of that capacity plus
 * 4 bytes per row (320 × 240: about 1.8 MB).
 */
export function createLabelBitRunsScratch(width: number, height: number): LabelBitRunsScratch {
  if (!Number.isInteger(width) || width < 0 || !Number.isInteger(height) || height < 0) {
    throw new RangeError(`createLabelBitRunsScratch: width and height must be non-negative integers, got ${width}×${height}`);
  }
  const runs = maxRunsPerRow(width) * height;
  return { ...emptyScratch(runs, height), ...labelArrays(runs + 1) };
}

/** Work buffers with room for `runs` runs, `height` rows and no label. */
function emptyScratch(runs: number, height: number): LabelBitRunsScratch {
  return {
    runStart: new Int32Array(runs),
    runEnd: new Int32Array(runs),
    parent: new Int32Array(runs),
    rowStart: new Int32Array(height + 1),
    ...labelArrays(1),
  };
}

/** The per-label accumulators, each of `length` entries. */
function labelArrays(length: number) {
  return {
    area: new Int32Array(length),
    minX: new Int32Array(length),
    maxX: new Int32Array(length),
    minY: new Int32Array(length),
    maxY: new Int32Array(length),
    sumX: new Float64Array(length),
    sumY: new Float64Array(length),
  };
}

/**
 * Labels the connected components of a bit-packed mask (see {@link BitMask}) and measures each
 * one, with exactly the result of `labelComponents(unpackMask(mask), { connectivity }).blobs`:
 * the same blobs (area, inclusive bounding box, centroid, bottom-centre point), numbered 1..count
 * in raster order of their first pixel, without producing a per-pixel label image.
 *
 * Method: run-based two-scan labelling (He, Chao & Suzuki, "A run-based two-scan labeling
 * algorithm", IEEE Trans. Image Processing 17(5), 2008). The first scan finds the runs of set
 * pixels of each row straight from the words (the lowest set bit `v & -v` starts a run, the
 * lowest clear bit above it ends it, located with `Math.clz32`; zero words cost one test; the
 * padding bits past the row end are masked off), gives each run a provisional label (its index)
 * and unites it with every run of the row above it touches. Runs [s, e) and [s', e') of adjacent
 * rows touch when s' < e + k and e' + k > s, with k = 1 for 8-connectivity (a corner contact
 * counts) and k = 0 for 4-connectivity; a two-pointer sweep over the two rows finds all such
 * pairs. The equivalences are kept in a union–find table as in {@link labelComponents} (Wu,
 * Otoo & Suzuki 2005/2009): each union links the larger root to the smaller, so a root is the
 * first run of its set in raster order, which holds the set's first pixel; flattening the table
 * in increasing order then numbers the blobs as labelComponents does. The second scan goes over
 * the runs, not the pixels: a run [s, e) of row y adds e − s to the area and, exactly in
 * integers, (s + e − 1)(e − s) / 2 to the sum of x and y(e − s) to the sum of y, so the
 * centroids are the same doubles as labelComponents' per-pixel sums give.
 *
 * Two runs of row y, [0, 2) and [3, 4), and one of row y + 1, [2, 3):
 *
 *     # # . #      8-connectivity: [2, 3) touches both (corners), one blob;
 *     . . # .      4-connectivity: three blobs.
 *
 * Cost: O(words + runs) time; with `scratch` given and large enough, the only allocations are
 * the blob objects and the result array.
 *
 * Example: with 8-connectivity the mask
 *
 *     # . .
 *     . # #
 *
 * is one blob {label 1, area 3, x0 0, y0 0, x1 2, y1 1, cx 1, cy 2/3, footX 1, footY 1}.
 */
export function labelBitRuns(mask: BitMask, options: LabelBitRunsOptions = {}): { count: number; blobs: Blob[] } {
  const { connectivity = 8, scratch } = options;

  // Validate arguments.
  const { width, height, words, data } = mask;
  if (!Number.isInteger(width) || width < 0 || !Number.isInteger(height) || height < 0) {
    throw new RangeError(`mask width and height must be non-negative integers, got ${width}×${height}`);
  }
  if (words !== wordsPerRow(width)) {
    throw new RangeError(`mask.words must be ⌈width / 32⌉ = ${wordsPerRow(width)} for width ${width}, got ${words}`);
  }
  if (!(data instanceof Int32Array) || data.length !== words * height) {
    throw new RangeError(`mask.data must be an Int32Array of length ${words * height} (${words} words × ${height} rows), got length ${data?.length}`);
  }
  if (connectivity !== 4 && connectivity !== 8) {
    throw new RangeError(`options.connectivity must be 4 or 8, got ${String(connectivity)}`);
  }
  if (scratch !== undefined) checkScratch(scratch);

  const rowRuns = maxRunsPerRow(width);
  const maxRuns = rowRuns * height;
  // Without a scratch, start from room for a few runs per row and grow (doubling) as needed.
  const work = scratch ?? emptyScratch(Math.min(maxRuns, 4 * height + rowRuns), height);
  if (work.rowStart.length < height + 1) work.rowStart = new Int32Array(height + 1);
  const rowStart = work.rowStart;
  let runStart = work.runStart;
  let runEnd = work.runEnd;
  let parent = work.parent;

  const lastWord = words - 1;
  const tail = width & 31;
  const lastMask = tail === 0 ? -1 : (1 << tail) - 1;
  const k = connectivity === 8 ? 1 : 0;

  // Scan 1: runs of each row, and their equivalences with the runs of the row above.
  let n = 0; // runs so far
  for (let y = 0; y < height; y++) {
    if (runStart.length - n < rowRuns) {
      growRuns(work, n, n + rowRuns, maxRuns);
      runStart = work.runStart;
      runEnd = work.runEnd;
      parent = work.parent;
    }
    const first = n;
    rowStart[y] = first;
    let open = false; // a run begun in an earlier word of this row is still running
    for (let w = 0, i = y * words; w < words; w++, i++) {
      let v = data[i];
      if (w === lastWord) v &= lastMask;
      const x0 = w << 5;
      if (open) {
        if (v === -1) continue;
        const z = ~v;
        const low = z & -z; // lowest clear bit: the open run ends just before it
        runEnd[n++] = x0 + 31 - Math.clz32(low);
        open = false;
        v &= -low;
      }
      while (v !== 0) {
        const t = v & -v; // lowest set bit: a run starts here
        runStart[n] = x0 + 31 - Math.clz32(t);
        const z = ~v & -t; // clear bits at or above the start
        if (z === 0) {
          open = true;
          break;
        }
        const low = z & -z;
        runEnd[n++] = x0 + 31 - Math.clz32(low);
        v &= -low;
      }
    }
    if (open) runEnd[n++] = width;

    // Unite each new run with the runs of row y − 1 it touches (two pointers; both rows sorted).
    if (y === 0) {
      for (let r = first; r < n; r++) parent[r] = r;
      continue;
    }
    const prevEnd = first;
    let j = rowStart[y - 1];
    for (let r = first; r < n; r++) {
      parent[r] = r;
      const s = runStart[r] - k;
      const e = runEnd[r] + k;
      while (j < prevEnd && runEnd[j] <= s) j++;
      for (let q = j; q < prevEnd && runStart[q] < e; q++) unionSets(parent, r, q);
    }
  }
  rowStart[height] = n;

  // Flatten: roots get consecutive final labels; since parent[r] <= r, parent[parent[r]] is
  // already final when r is reached, so the table is rewritten in place.
  let count = 0;
  for (let r = 0; r < n; r++) {
    const p = parent[r];
    parent[r] = p === r ? ++count : parent[p];
  }

  // Scan 2: per-label accumulators, over the runs. A label is first met at its root run, and
  // roots come in label order, so a label above every one met so far is met for the first time.
  if (work.area.length < count + 1) Object.assign(work, labelArrays(Math.max(count + 1, Math.min(2 * work.area.length, maxRuns + 1))));
  const { area, minX, maxX, minY, maxY, sumX, sumY } = work;
  let seen = 0;
  for (let y = 0; y < height; y++) {
    const end = rowStart[y + 1];
    for (let r = rowStart[y]; r < end; r++) {
      const l = parent[r];
      const s = runStart[r];
      const e = runEnd[r];
      const len = e - s;
      const xs = ((s + e - 1) * len) / 2;
      if (l > seen) {
        seen = l;
        area[l] = len;
        minX[l] = s;
        maxX[l] = e - 1;
        minY[l] = y;
        maxY[l] = y;
        sumX[l] = xs;
        sumY[l] = y * len;
      } else {
        area[l] += len;
        if (s < minX[l]) minX[l] = s;
        if (e - 1 > maxX[l]) maxX[l] = e - 1;
        maxY[l] = y; // rows are visited in increasing order
        sumX[l] += xs;
        sumY[l] += y * len;
      }
    }
  }

  const blobs = blobsFromSums(count, { area, minX, minY, maxX, maxY, sumX, sumY });
  return { count, blobs };
}

/** Throws, naming the field, when `scratch` is not a set of work buffers as the type describes. */
function checkScratch(scratch: LabelBitRunsScratch): void {
  const runs = scratch.runStart?.length;
  for (const field of ['runStart', 'runEnd', 'parent', 'rowStart', 'area', 'minX', 'maxX', 'minY', 'maxY'] as const) {
    if (!(scratch[field] instanceof Int32Array)) throw new TypeError(`options.scratch.${field} must be an Int32Array`);
  }
  for (const field of ['sumX', 'sumY'] as const) {
    if (!(scratch[field] instanceof Float64Array)) throw new TypeError(`options.scratch.${field} must be a Float64Array`);
  }
  for (const field of ['runEnd', 'parent'] as const) {
    if (scratch[field].length !== runs) {
      throw new RangeError(`options.scratch.${field} must have the length of runStart (${runs}), got ${scratch[field].length}`);
    }
  }
  const labels = scratch.area.length;
  for (const field of ['minX', 'maxX', 'minY', 'maxY', 'sumX', 'sumY'] as const) {
    if (scratch[field].length !== labels) {
      throw new RangeError(`options.scratch.${field} must have the length of area (${labels}), got ${scratch[field].length}`);
    }
  }
}

/**
 * Replaces the run arrays by ones of at least `needed` entries (double the old length when that is
 * more, but not over `most`), keeping the first `used`.
 */
function growRuns(work: LabelBitRunsScratch, used: number, needed: number, most: number): void {
  const length = Math.max(needed, Math.min(2 * work.runStart.length, most));
  const runStart = new Int32Array(length);
  const runEnd = new Int32Array(length);
  const parent = new Int32Array(length);
  runStart.set(work.runStart.subarray(0, used));
  runEnd.set(work.runEnd.subarray(0, used));
  parent.set(work.parent.subarray(0, used));
  work.runStart = runStart;
  work.runEnd = runEnd;
  work.parent = parent;
}

