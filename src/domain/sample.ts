/**
 * Per-zone samples: what counting reports every few seconds for each camera and zone.
 *
 * A sample at `time` t with `intervalMs` i stands for the half-open interval `[t − i, t)`: the
 * counter measured `value` over that stretch. Intervals of one zone must not overlap (the store
 * refuses an overlapping sample), so coverage adds up. After an outage the counter simply starts
 * sampling again with its normal interval: the outage is a stretch with no samples, never rows of
 * zeros, and the rollups' `covered_ms` shows it.
 *
 * How samples are stored and how durable a committed one is: src/store/samples.ts.
 */

/** What a sample measures: people in a room zone, or the share of a shelf zone covered (0..1). */
export const SampleKind = { count: 'count', fill: 'fill' } as const;
export type SampleKind = (typeof SampleKind)[keyof typeof SampleKind];

/** The sample kind each zone kind reports. */
export const SAMPLE_KIND_OF_ZONE = { room: SampleKind.count, shelf: SampleKind.fill } as const;

/**
 * Quality flags, a bitmask stored in `samples.quality` (0 = nothing to report). A set flag marks
 * the value as less trustworthy; it is still stored and counted in the rollups (`flagged_ms`).
 */
export const QualityFlag = {
  /** 1: the camera view changed (moved, covered, refocused): the model no longer fits the scene. */
  viewChanged: 1,
  /** 2: the background model is older than its validity or has drifted from the scene. */
  modelStale: 2,
  /** 4: the scene is too dark or too bright to separate foreground reliably. */
  lowLight: 4,
  /** 8: fewer frames than expected were analysed in the interval (decode errors, slow source). */
  framesMissing: 8,
  /** 16: the model is still being learned; the value is provisional. */
  learning: 16,
} as const;
export type QualityFlag = (typeof QualityFlag)[keyof typeof QualityFlag];

/** All defined quality bits; a sample with other bits set is refused. */
export const QUALITY_MASK = Object.values(QualityFlag).reduce((a, b) => a | b, 0);

/** Largest count accepted, people per zone (inclusive); keeps an hour's rollup sum below 2⁵³. */
export const MAX_COUNT = 1000;

export interface Sample {
  /** End of the covered interval, UTC epoch ms (integer, exclusive end). */
  readonly time: number;
  readonly camera: string;
  readonly zone: string;
  /** `count`: people, 0..1000 inclusive, may be non-integer when smoothed; `fill`: 0..1 inclusive. */
  readonly value: number;
  /** Must match the zone's kind: `count` for room zones, `fill` for shelf zones. */
  readonly kind: SampleKind;
  /** Length of the covered interval `[time − intervalMs, time)`, ms; 1..3 600 000 inclusive. */
  readonly intervalMs: number;
  /** {@link QualityFlag} bits; default 0. */
  readonly quality?: number;
}

export interface StoredSample extends Sample {
  readonly quality: number;
}
