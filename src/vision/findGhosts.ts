import type { GreyFrame, Mask } from '../domain/frame.ts';
import type { Blob } from './labelComponents.ts';

/** Edge strength along one blob's outline, in the frame and in the background it was cut from. */
export interface BoundaryEdges {
  /** Outline pixels looked at (foreground with a background 4-neighbour, not on the image border). */
  readonly pixels: number;
  /** Mean gradient magnitude of the frame along the outline, grey levels per pixel. */
  readonly frame: number;
  /** Mean gradient magnitude of the background image along the outline. */
  readonly background: number;
  /**
   * Mean gradient magnitude of the frame just outside the blob (background pixels 2 to 3 pixels
   * from it, in its box widened by 3): the texture of what surrounds it. NaN without such pixels.
   */
  readonly surround: number;
}

export interface FindGhostsOptions {
  /**
   * A blob is a ghost when the frame's edges along its outline are weaker than this share of the
   * background's, 0..1 exclusive; default 0.5.
   */
  ratio?: number;
  /**
   * A blob is also a ghost when the frame's edges along its outline are weaker than this many
   * times the frame's texture just around it (`surround`): the outline has no edge of its own,
   * as where a blurred trace of something gone is left in a learned mean; > 0, default 1.5.
   */
  surroundRatio?: number;
  /**
   * Least mean background edge along the outline, grey levels per pixel (> 0): below it there is
   * nothing in the background to have gone, so the blob is not called a ghost; default 6.
   */
  minEdge?: number;
  /** Blobs smaller than this many pixels are not looked at (≥ 1); default 20. */
  minArea?: number;
}

/**
 * The largest gradient magnitude in the 3×3 neighbourhood of pixel (x, y) of `image`: central
 * differences |I(x+1) − I(x−1)| + |I(y+1) − I(y−1)|, the largest of the nine, so that an outline
 * that the cleaned mask puts a pixel off the true edge still finds it. (x, y) at least 2 pixels
 * from the border.
 */
function edgeNear(image: Float32Array, width: number, x: number, y: number): number {
  let best = 0;
  for (let dy = -1; dy <= 1; dy++) {
    for (let dx = -1; dx <= 1; dx++) {
      const p = (y + dy) * width + x + dx;
      const g = Math.abs(image[p + 1] - image[p - 1]) + Math.abs(image[p + width] - image[p - width]);
      if (g > best) best = g;
    }
  }
  return best;
}

/** Whether a foreground pixel lies within `r` pixels (Chebyshev distance) of (x, y). */
function nearForeground(m: Uint8Array, width: number, height: number, x: number, y: number, r: number): boolean {
  for (let yy = Math.max(0, y - r); yy <= Math.min(height - 1, y + r); yy++) {
    for (let xx = Math.max(0, x - r); xx <= Math.min(width - 1, x + r); xx++) if (m[yy * width + xx] !== 0) return true;
  }
  return false;
}

/**
 * Edge strength along a blob's outline in the frame and in the background image (the model's
 * mean). Outline pixels are the blob box's foreground pixels with a background 4-neighbour,
 * 2 or more pixels from the image border.
 */
export function boundaryEdges(frame: GreyFrame, background: Float32Array, mask: Mask, blob: Blob): BoundaryEdges {
  const { width, height } = mask;
  if (frame.width !== width || frame.height !== height || background.length !== width * height) {
    throw new RangeError(`frame ${frame.width}×${frame.height}, background of ${background.length} pixels and mask ${width}×${height} must have one size`);
  }
  const m = mask.data;
  let pixels = 0;
  let inFrame = 0;
  let inBackground = 0;
  const x0 = Math.max(2, blob.x0);
  const x1 = Math.min(width - 3, blob.x1);
  const y0 = Math.max(2, blob.y0);
  const y1 = Math.min(height - 3, blob.y1);
  for (let y = y0; y <= y1; y++) {
    for (let x = x0; x <= x1; x++) {
      const p = y * width + x;
      if (m[p] === 0 || (m[p - 1] !== 0 && m[p + 1] !== 0 && m[p - width] !== 0 && m[p + width] !== 0)) continue;
      pixels++;
      inFrame += edgeNear(frame.data, width, x, y);
      inBackground += edgeNear(background, width, x, y);
    }
  }
  // The surround: pixels with no foreground within 1 pixel but some within 3.
  let around = 0;
  let inSurround = 0;
  const sx0 = Math.max(2, blob.x0 - 3);
  const sx1 = Math.min(width - 3, blob.x1 + 3);
  const sy0 = Math.max(2, blob.y0 - 3);
  const sy1 = Math.min(height - 3, blob.y1 + 3);
  for (let y = sy0; y <= sy1; y++) {
    for (let x = sx0; x <= sx1; x++) {
      const p = y * width + x;
      if (m[p] !== 0 || nearForeground(m, width, height, x, y, 1) || !nearForeground(m, width, height, x, y, 3)) continue;
      around++;
      inSurround += edgeNear(frame.data, width, x, y);
    }
  }
  const surround = around === 0 ? Number.NaN : inSurround / around;
  return pixels === 0 ? { pixels, frame: 0, background: 0, surround } : { pixels, frame: inFrame / pixels, background: inBackground / pixels, surround };
}

/**
 * The blobs that are ghosts: places where the background image shows something that is no longer
 * there — a person who stood still while the empty scene was learned and has since walked off, a
 * chair moved away. A ghost is foreground because the frame differs from the background, but its
 * outline is the outline of what has gone: the background has edges along it, the frame (now
 * showing the floor) has few. Something that has come (a person, a box put down) is the other
 * way round: its edges are in the frame. Where robust learning left only a blurred trace of
 * what had gone, the background has no clear edge either; then the frame's outline is no stronger
 * than the texture around it (`surroundRatio`), where anything that has come shows an edge of its
 * own. This is the edge-energy test used to tell removed from
 * abandoned objects (Tian, Feris & Hampapur 2005, IEEE Trans. SMC-C 35(4); from memory); the
 * notion of a ghost in background subtraction is Cucchiara, Grana, Piccardi & Prati 2003 (IEEE
 * PAMI 25(10)).
 *
 * Example: the background mean shows a dark figure on the paving, the frame shows bare paving:
 * the residual blob's outline has strong background edges and weak frame edges: a ghost.
 */
export function findGhosts(frame: GreyFrame, background: Float32Array, mask: Mask, blobs: readonly Blob[], options: FindGhostsOptions = {}): Blob[] {
  const { ratio = 0.5, surroundRatio = 1.5, minEdge = 6, minArea = 20 } = options;
  if (!(surroundRatio > 0)) throw new RangeError(`surroundRatio must be > 0, got ${surroundRatio}`);
  if (!(ratio > 0 && ratio < 1)) throw new RangeError(`ratio must be in (0, 1), got ${ratio}`);
  if (!(minEdge > 0)) throw new RangeError(`minEdge must be > 0, got ${minEdge}`);
  if (!(minArea >= 1)) throw new RangeError(`minArea must be ≥ 1, got ${minArea}`);
  const ghosts: Blob[] = [];
  for (const blob of blobs) {
    if (blob.area < minArea) continue;
    const edges = boundaryEdges(frame, background, mask, blob);
    if (edges.pixels === 0) continue;
    const edgesGone = edges.background >= minEdge && edges.frame < ratio * edges.background;
    const noEdgeOfItsOwn = edges.frame < surroundRatio * edges.surround;
    if (edgesGone || noEdgeOfItsOwn) ghosts.push(blob);
  }
  return ghosts;
}
