import type { Mask } from '../domain/frame.ts';
import { unionSets } from './unionFind.ts';

/** Which neighbours count as touching: the 4 edge neighbours, or those plus the 4 corner ones. */
export const Connectivity = {
  /** Edge neighbours only (left, right, up, down). */
  Four: 4,
  /** Edge and corner neighbours. */
  Eight: 8,
} as const;
export type Connectivity = (typeof Connectivity)[keyof typeof Connectivity];

/** One connected component of a mask, in pixel coordinates (pixel centres at integer x, y). */
export interface Blob {
  /** Label of the blob in {@link Components.labels}, 1..count. */
  label: number;
  /** Number of pixels. */
  area: number;
  /** Leftmost column, inclusive. */
  x0: number;
  /** Top row, inclusive. */
  y0: number;
  /** Rightmost column, inclusive. */
  x1: number;
  /** Bottom row, inclusive. */
  y1: number;
  /** Centroid column: mean x of the blob's pixels. */
  cx: number;
  /** Centroid row: mean y of the blob's pixels. */
  cy: number;
  /** Bottom-centre column, (x0 + x1) / 2: where a standing object touches the floor. */
  footX: number;
  /** Bottom-centre row, y1. */
  footY: number;
}

/** Result of {@link labelComponents}. */
export interface Components {
  /** width × height labels, row-major like the mask: 0 = background, 1..count = blob. */
  labels: Int32Array;
  /** Number of blobs. */
  count: number;
  /** The blobs, `blobs[i].label === i + 1`, in raster order of their first (top-most, then left-most) pixel. */
  blobs: Blob[];
}

export interface LabelComponentsOptions {
  /** Pixel adjacency, 4 or 8; default 8. */
  connectivity?: Connectivity;
  /** Labels buffer to write into and return as `labels`, length exactly width × height; default: a new one. */
  out?: Int32Array;
  /**
   * Union–find work array, reusable across calls; length at least ⌈width·height / 2⌉ + 1
   * (inclusive); default: a new one per call. Its contents on return are unspecified.
   */
  scratch?: Int32Array;
}

/**
 * Labels the connected components of a binary mask (any non-zero byte is foreground) and measures
 * each one: area, inclusive bounding box, centroid and bottom-centre point.
 *
 * Method: the classic two-pass raster labelling with an equivalence table (Rosenfeld & Pfaltz,
 * "Sequential operations in digital picture processing", J. ACM 13(4), 1966), with the union–find
 * table and the 8-connectivity decision tree of Wu, Otoo & Suzuki ("Optimizing connected component
 * labeling algorithms", SPIE Medical Imaging 2005; journal version Pattern Anal. Appl. 12, 2009):
 * each union links the larger root to the smaller one, so a root is always the smallest
 * provisional label of its set and the table can be flattened into consecutive final labels in a
 * single increasing sweep. Provisional labels are created in raster order and a component's first
 * pixel always creates one, so final labels follow the raster order of first pixels.
 *
 * The scanned neighbours of pixel e (8-connectivity uses a, b, c, d; 4-connectivity b, d):
 *
 *     a b c
 *     d e
 *
 * A pixel that starts a new provisional label has neither its left nor its upper neighbour set,
 * so such pixels are never edge-adjacent and there are at most ⌈width·height / 2⌉ of them: that
 * bounds the `scratch` length.
 *
 * Cost: two passes over the pixels plus O(count) for the blob list; the only allocations per call
 * are the blob list and O(count) accumulators when `out` and `scratch` are given.
 *
 * Example: with 8-connectivity the mask
 *
 *     # . .
 *     . # #
 *
 * is one blob {label 1, area 3, x0 0, y0 0, x1 2, y1 1, cx 1, cy 2/3, footX 1, footY 1};
 * with 4-connectivity it is two blobs, the single pixel at (0, 0) being label 1.
 */
export function labelComponents(mask: Mask, options: LabelComponentsOptions = {}): Components {
  const { connectivity = 8, out, scratch } = options;

  // Validate arguments.
  const { width, height, data } = mask;
  if (!Number.isInteger(width) || width < 0 || !Number.isInteger(height) || height < 0) {
    throw new RangeError(`mask width and height must be non-negative integers, got ${width}×${height}`);
  }
  const n = width * height;
  if (!(data instanceof Uint8Array) || data.length !== n) {
    throw new RangeError(`mask.data must be a Uint8Array of length ${n} (${width}×${height}), got length ${data?.length}`);
  }
  if (connectivity !== 4 && connectivity !== 8) {
    throw new RangeError(`options.connectivity must be 4 or 8, got ${String(connectivity)}`);
  }
  if (out !== undefined && (!(out instanceof Int32Array) || out.length !== n)) {
    throw new RangeError(`options.out must be an Int32Array of length ${n} (${width}×${height}), got length ${out?.length}`);
  }
  const maxProvisional = Math.ceil(n / 2);
  if (scratch !== undefined && (!(scratch instanceof Int32Array) || scratch.length < maxProvisional + 1)) {
    throw new RangeError(
      `options.scratch must be an Int32Array of length at least ${maxProvisional + 1} for ${width}×${height}, got length ${scratch?.length}`,
    );
  }

  const labels = out ?? new Int32Array(n);
  const parent = scratch ?? new Int32Array(maxProvisional + 1);

  // Pass 1: provisional labels and their equivalences.
  const next =
    connectivity === 8 ? firstPass8(data, width, height, labels, parent) : firstPass4(data, width, height, labels, parent);

  // Flatten: roots get consecutive final labels; since parent[i] <= i, parent[parent[i]] is
  // already final when i is reached, so the table is rewritten in place.
  let count = 0;
  for (let i = 1; i < next; i++) {
    const p = parent[i];
    parent[i] = p === i ? ++count : parent[p];
  }

  // Pass 2: final labels and per-blob accumulators.
  const area = new Int32Array(count + 1);
  const minX = new Int32Array(count + 1).fill(width);
  const minY = new Int32Array(count + 1).fill(height);
  const maxX = new Int32Array(count + 1).fill(-1);
  const maxY = new Int32Array(count + 1).fill(-1);
  const sumX = new Float64Array(count + 1);
  const sumY = new Float64Array(count + 1);
  for (let y = 0, i = 0; y < height; y++) {
    for (let x = 0; x < width; x++, i++) {
      const provisional = labels[i];
      if (provisional === 0) continue;
      const l = parent[provisional];
      labels[i] = l;
      area[l]++;
      if (x < minX[l]) minX[l] = x;
      if (x > maxX[l]) maxX[l] = x;
      if (y < minY[l]) minY[l] = y;
      maxY[l] = y; // rows are visited in increasing order
      sumX[l] += x;
      sumY[l] += y;
    }
  }

  const blobs = blobsFromSums(count, { area, minX, minY, maxX, maxY, sumX, sumY });
  return { labels, count, blobs };
}


/** First pass, 4-connectivity; returns one past the last provisional label used. */
function firstPass4(data: Uint8Array, width: number, height: number, labels: Int32Array, parent: Int32Array): number {
  let next = 1;
  for (let y = 0, i = 0; y < height; y++) {
    for (let x = 0; x < width; x++, i++) {
      if (data[i] === 0) {
        labels[i] = 0;
        continue;
      }
      const up = y > 0 ? labels[i - width] : 0;
      const left = x > 0 ? labels[i - 1] : 0;
      if (up !== 0) {
        labels[i] = left !== 0 && left !== up ? unionSets(parent, up, left) : up;
      } else if (left !== 0) {
        labels[i] = left;
      } else {
        parent[next] = next;
        labels[i] = next++;
      }
    }
  }
  return next;
}

/**
 * First pass, 8-connectivity, with the decision tree of Wu, Otoo & Suzuki: if b is set it is
 * adjacent to a, c and d, which are therefore already in its set, so its label is copied without
 * a union; only c with a, or c with d, need one.
 */
function firstPass8(data: Uint8Array, width: number, height: number, labels: Int32Array, parent: Int32Array): number {
  let next = 1;
  const last = width - 1;
  for (let y = 0, i = 0; y < height; y++) {
    const hasUp = y > 0;
    for (let x = 0; x < width; x++, i++) {
      if (data[i] === 0) {
        labels[i] = 0;
        continue;
      }
      const b = hasUp ? labels[i - width] : 0;
      if (b !== 0) {
        labels[i] = b;
        continue;
      }
      const c = hasUp && x < last ? labels[i - width + 1] : 0;
      const a = hasUp && x > 0 ? labels[i - width - 1] : 0;
      const d = x > 0 ? labels[i - 1] : 0;
      if (c !== 0) {
        if (a !== 0) labels[i] = unionSets(parent, c, a);
        else if (d !== 0) labels[i] = unionSets(parent, c, d);
        else labels[i] = c;
      } else if (a !== 0) {
        labels[i] = a; // d, if set, is adjacent to a and already in its set
      } else if (d !== 0) {
        labels[i] = d;
      } else {
        parent[next] = next;
        labels[i] = next++;
      }
    }
  }
  return next;
}

/** Per-label sums of a labelling, indexed by final label 1..count. */
export interface LabelSums {
  readonly area: ArrayLike<number>;
  readonly minX: ArrayLike<number>;
  readonly minY: ArrayLike<number>;
  readonly maxX: ArrayLike<number>;
  readonly maxY: ArrayLike<number>;
  /** Σ x and Σ y of each label's pixels. */
  readonly sumX: ArrayLike<number>;
  readonly sumY: ArrayLike<number>;
}

/** The blobs of labels 1..count from their sums (the measures of {@link Blob}); shared with labelBitRuns. */
export function blobsFromSums(count: number, sums: LabelSums): Blob[] {
  const { area, minX, minY, maxX, maxY, sumX, sumY } = sums;
  const blobs: Blob[] = new Array(count);
  for (let l = 1; l <= count; l++) {
    const a = area[l];
    blobs[l - 1] = {
      label: l,
      area: a,
      x0: minX[l],
      y0: minY[l],
      x1: maxX[l],
      y1: maxY[l],
      cx: sumX[l] / a,
      cy: sumY[l] / a,
      footX: (minX[l] + maxX[l]) / 2,
      footY: maxY[l],
    };
  }
  return blobs;
}
