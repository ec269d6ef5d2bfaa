/**
 * Zones: user-drawn parts of the image whose occupancy (rooms) or fill (shelf sections) is reported.
 *
 * Coordinates are normalised: x from 0 (left edge) to 1 (right edge), y from 0 (top edge) to
 * 1 (bottom edge), the same directions as {@link GreyFrame}.
 */

/** What a zone reports: people counted (`room`) or the share covered by items (`shelf`). */
export const ZoneKind = { room: 'room', shelf: 'shelf' } as const;
export type ZoneKind = (typeof ZoneKind)[keyof typeof ZoneKind];

/** Which point of a blob decides the zone it belongs to. */
export const AnchorPoint = {
  /** Bottom centre of the bounding box: where a person stands. Default for rooms. */
  foot: 'foot',
  /** Area-weighted centre. Default for shelves. */
  centroid: 'centroid',
} as const;
export type AnchorPoint = (typeof AnchorPoint)[keyof typeof AnchorPoint];

/** A point [x, y] in normalised image coordinates (0..1 inclusive). */
export type NormalisedPoint = readonly [number, number];

/**
 * A reference person: where their feet were and the area they covered. Drawn as a box in the
 * dashboard, it also has the foot point's x and the box height; the box is then `area / height`
 * wide, centred on x, with its bottom edge at y.
 */
export interface PerspectiveReference {
  /** Foot row, normalised (0 top .. 1 bottom, inclusive). */
  readonly y: number;
  /** Area of one person there, fraction of the frame area, in (0, 1]. */
  readonly area: number;
  /** Box only: foot point's x, normalised (0 left .. 1 right, inclusive). */
  readonly x?: number;
  /** Box only: the box height, fraction of the frame height, in (0, 1]. */
  readonly height?: number;
}

export interface Zone {
  /** Stable identifier: letters, digits, `-` and `_`; used in output keys and the database. */
  readonly id: string;
  /** Human name for tables and the dashboard; defaults to the id. */
  readonly name?: string;
  readonly kind: ZoneKind;
  /** Simple polygon, ≥ 3 vertices, not self-intersecting, vertices in 0..1 inclusive. */
  readonly polygon: readonly NormalisedPoint[];
  /** Foreground threshold in noise units (residual / learned noise level); default from the counter. */
  readonly threshold?: number;
  /** Smallest blob kept, as a fraction of the frame area (exclusive: smaller blobs are dropped). */
  readonly minBlobArea?: number;
  /** Area of one person (rooms) or one item (shelves), as a fraction of the frame area. */
  readonly personArea?: number;
  /** Which blob point decides membership; default `foot` for rooms, `centroid` for shelves. */
  readonly anchor?: AnchorPoint;
  /**
   * Perspective: two or more reference people, each where their feet were (normalised y) and the
   * area they covered (fraction of the frame). The expected person area then follows the foot
   * point's y (see fitPersonArea) instead of the single `personArea`.
   */
  readonly perspective?: readonly PerspectiveReference[];
  /** Capacity in people (rooms); informational for the counting engine. */
  readonly capacity?: number;
  /**
   * Seconds a changed but static object (a box put down, a chair moved) must stay before it
   * becomes background, > 0; absent (the default, and right for rooms, where people sit still
   * for long): never. See createDriftingCounter.
   */
  readonly absorbSeconds?: number;
}
