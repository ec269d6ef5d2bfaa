export interface QuickselectOptions {
  /**
   * Work buffer the selection copies `values` into and reorders, length ≥ values.length
   * (inclusive); may be `values` itself, to select in place (then `values` is reordered).
   * Default: a new copy, so `values` is left alone.
   */
  scratch?: Float32Array;
}

/**
 * The value of the given rank among `values` (0 = the smallest, n − 1 = the largest): the same
 * number as `Float32Array.from(values).sort()[rank]`, found in linear expected time instead of
 * a full sort.
 *
 * Method: Floyd & Rivest's SELECT (R. W. Floyd, R. L. Rivest, "Algorithm 489: The algorithm
 * SELECT — for finding the ith smallest of n elements", CACM 18(3), 1975), Hoare's FIND
 * (quickselect, CACM 1961) with the pivot taken from a recursively selected sample around the
 * expected position, so that about n + min(rank, n − rank) comparisons suffice. A range that
 * does not shrink fast enough is sorted instead, so the worst case stays O(n log n). NaNs rank
 * above every number, as in the typed-array sort; −0 and +0 count as equal.
 *
 * Example: quickselect(Float32Array.of(5, 1, 4, 2, 3), 1) === 2.
 *
 * @param rank a whole number in 0..n − 1 (inclusive).
 */
export function quickselect(values: Float32Array, rank: number, options: QuickselectOptions = {}): number {
  const { scratch } = options;
  const n = values.length;
  if (!(Number.isInteger(rank) && rank >= 0 && rank < n)) {
    throw new RangeError(`rank must be a whole number in 0..${n - 1}, got ${rank}`);
  }
  if (scratch !== undefined && scratch.length < n) {
    throw new RangeError(`scratch has length ${scratch.length}, expected at least ${n}`);
  }
  const a = scratch ?? new Float32Array(n);
  if (a !== values) a.set(values);

  // NaNs go to the end, past every number, as the typed-array sort puts them.
  let end = n;
  for (let i = n - 1; i >= 0; i--) {
    if (a[i] !== a[i]) {
      end--;
      a[i] = a[end];
      a[end] = NaN;
    }
  }
  if (rank >= end) return NaN;

  floydRivest(a, 0, end - 1, rank, 2 * (32 - Math.clz32(end)) + 8);
  return a[rank];
}

/**
 * Reorders a[left..right] so that a[rank] is the value of that rank and no larger value lies
 * before it nor a smaller one after it. `budget` bounds the partitioning rounds; past it the
 * range is sorted.
 */
function floydRivest(a: Float32Array, left: number, right: number, rank: number, budget: number): void {
  while (right > left) {
    if (budget-- <= 0) {
      a.subarray(left, right + 1).sort();
      return;
    }
    if (right - left > 600) {
      // Select within a sample-sized range around the expected position first, so that the
      // pivot below is close to the wanted rank.
      const n = right - left + 1;
      const m = rank - left + 1;
      const logN = Math.log(n);
      const s = 0.5 * Math.exp((2 * logN) / 3);
      const sd = 0.5 * Math.sqrt((logN * s * (n - s)) / n) * (m - n / 2 < 0 ? -1 : 1);
      const newLeft = Math.max(left, Math.floor(rank - (m * s) / n + sd));
      const newRight = Math.min(right, Math.floor(rank + ((n - m) * s) / n + sd));
      floydRivest(a, newLeft, newRight, rank, budget);
    }
    const t = a[rank];
    let i = left;
    let j = right;
    swap(a, left, rank);
    if (a[right] > t) swap(a, left, right);
    while (i < j) {
      swap(a, i, j);
      i++;
      j--;
      while (a[i] < t) i++;
      while (a[j] > t) j--;
    }
    if (a[left] === t) {
      swap(a, left, j);
    } else {
      j++;
      swap(a, j, right);
    }
    if (j <= rank) left = j + 1;
    if (rank <= j) right = j - 1;
  }
}

function swap(a: Float32Array, i: number, j: number): void {
  const t = a[i];
  a[i] = a[j];
  a[j] = t;
}
