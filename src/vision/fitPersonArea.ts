/** A reference: where a person's feet were (normalised y, 0 top .. 1 bottom) and the area they covered (fraction of the frame). */
export interface PersonReference {
  readonly y: number;
  readonly area: number;
}

/** Expected area of one person as a function of the foot point's y. */
export interface PersonAreaModel {
  /** √area = intercept + slope · y (area as a fraction of the frame). */
  readonly intercept: number;
  readonly slope: number;
  /** Expected area (fraction of the frame) at foot row y (normalised); never below `minimum`. */
  areaAt(y: number): number;
}

export interface FitPersonAreaOptions {
  /** Smallest area the model returns, fraction of the frame; default 0.0002. */
  minimum?: number;
}

/**
 * Fits how large one person looks depending on where they stand. For a camera looking down on a
 * flat floor, a person's image height grows linearly with the image row of their feet (a pinhole
 * camera over a ground plane: the height is proportional to the row's distance from the
 * horizon), and their width with it, so the square root of the area is a straight line in the
 * foot row. It is fitted by least squares to two or more reference boxes (exactly through two).
 *
 * Example: references (y 0.5, area 0.004) and (y 1.0, area 0.016) give √area = 0.1265·y − 0.0000,
 * so a person standing at y 0.75 is expected to cover 0.009 of the frame.
 */
export function fitPersonArea(references: readonly PersonReference[], options: FitPersonAreaOptions = {}): PersonAreaModel {
  const { minimum = 0.0002 } = options;
  if (references.length < 2) throw new RangeError(`need at least 2 reference people, got ${references.length}`);
  references.forEach((r, i) => {
    if (!(r.y >= 0 && r.y <= 1)) throw new RangeError(`references[${i}].y must be in 0..1, got ${r.y}`);
    if (!(r.area > 0 && r.area <= 1)) throw new RangeError(`references[${i}].area must be in (0, 1], got ${r.area}`);
  });
  const n = references.length;
  const my = references.reduce((s, r) => s + r.y, 0) / n;
  const ms = references.reduce((s, r) => s + Math.sqrt(r.area), 0) / n;
  let sxy = 0;
  let sxx = 0;
  for (const r of references) {
    sxy += (r.y - my) * (Math.sqrt(r.area) - ms);
    sxx += (r.y - my) ** 2;
  }
  if (sxx === 0) throw new RangeError('the reference people must stand at different heights in the image (different y)');
  const slope = sxy / sxx;
  const intercept = ms - slope * my;
  return {
    intercept,
    slope,
    areaAt: (y) => Math.max(minimum, Math.max(0, intercept + slope * y) ** 2),
  };
}
