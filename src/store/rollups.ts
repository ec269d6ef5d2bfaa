import type Database from 'better-sqlite3';
import { checkEpochMs, checkId } from './validate.ts';

/**
 * Rollups: per camera, zone and **quarter-hour UTC bucket** `[bucket_start, bucket_start + 15 min)`.
 *
 * Why quarter hours and not hours: a site's local hours do not always start on a UTC hour. India
 * (+05:30) and Nepal (+05:45) start theirs at :30 and :15 past a UTC hour, and a DST change moves
 * them. Every UTC offset in current use is a whole multiple of 15 minutes (recalled from memory:
 * Asia/Kathmandu +05:45, Australia/Eucla +08:45, Pacific/Chatham +12:45 are the finest), so every
 * local hour of every zone is a union of whole UTC quarter hours. The store therefore keeps
 * zone-independent quarter-hour buckets, and the hourly export (`src/outputs/hourlyCsv.ts`) adds
 * up the four (or, around a DST change, two to four) buckets of each local hour in whatever IANA
 * zone it is asked for. Changing the site's zone never needs a rebuild, and a 23- or 25-hour local
 * day needs no special case here. The export refuses a zone whose offset is not a multiple of 15
 * minutes (only historical local mean times are).
 *
 * A sample at time t with interval i covers `[t − i, t)`. When that interval straddles bucket
 * boundaries it is **split proportionally**: each bucket gets the milliseconds of the interval that
 * fall inside it (`overlap`). Its columns:
 * - `samples`: samples whose last covered millisecond `t − 1` lies in the bucket (each sample is
 *   counted once, in the bucket where its interval ends);
 * - `weighted_sum`: Σ round(value × 10⁶) × overlap_ms, an exact integer (micro-units × ms), so
 *   sums do not depend on the order samples arrive and an incremental update equals a rebuild
 *   bit for bit; with counts ≤ 1000 and no overlapping samples an hour's sum stays below 2⁵³;
 * - `value_min`, `value_max`: over the samples whose interval overlaps the bucket;
 * - `occupied_ms`: overlap of samples with value > 0 (a count above zero; for fills it is the
 *   time with anything on the shelf);
 * - `flagged_ms`: overlap of samples with any quality flag set;
 * - `covered_ms`: Σ overlap. The store refuses overlapping samples for the same zone, so
 *   `covered_ms ≤ 15 min` and `covered_ms / 15 min` is the bucket's coverage. A bucket with no
 *   samples has no row: missing data is never a zero.
 *
 * Time-weighted mean over covered time = weighted_sum / 10⁶ / covered_ms.
 */

/** Rollup bucket length, ms: a quarter hour. */
export const BUCKET_MS = 900_000;
/** Longest interval one sample may cover, ms (inclusive): one hour. */
export const MAX_INTERVAL_MS = 3_600_000;
/** Fixed-point scale of `weighted_sum`: values are rounded to micro-units. */
export const VALUE_SCALE = 1_000_000;

/** The part of one sample's interval that falls in one bucket. */
export interface BucketPiece {
  /** Bucket start, UTC epoch ms, a multiple of {@link BUCKET_MS}. */
  readonly bucketStart: number;
  /** Milliseconds of the sample's interval inside this bucket (1..BUCKET_MS). */
  readonly overlapMs: number;
  /** True for the bucket holding the sample's last covered ms (t − 1): the sample counts here. */
  readonly ends: boolean;
}

/**
 * Splits the interval `[time − intervalMs, time)` at quarter-hour boundaries.
 *
 * Example: time = 00:15:04 UTC, interval 10 s → `[{00:00, 6000 ms}, {00:15, 4000 ms, ends}]`.
 */
export function bucketPieces(time: number, intervalMs: number): BucketPiece[] {
  const start = time - intervalMs;
  const endBucket = Math.floor((time - 1) / BUCKET_MS) * BUCKET_MS;
  const pieces: BucketPiece[] = [];
  for (let b = Math.floor(start / BUCKET_MS) * BUCKET_MS; b < time; b += BUCKET_MS) {
    const overlapMs = Math.min(time, b + BUCKET_MS) - Math.max(start, b);
    pieces.push({ bucketStart: b, overlapMs, ends: b === endBucket });
  }
  return pieces;
}

/** One rollup row. */
export interface Rollup {
  readonly camera: string;
  readonly zone: string;
  /** UTC epoch ms, multiple of {@link BUCKET_MS}. */
  readonly bucketStart: number;
  readonly samples: number;
  /** Σ round(value × 10⁶) × overlap ms. */
  readonly weightedSum: number;
  readonly min: number;
  readonly max: number;
  readonly occupiedMs: number;
  readonly flaggedMs: number;
  readonly coveredMs: number;
}

export interface RollupQuery {
  /** First bucket start included, UTC epoch ms (inclusive); default 0. */
  readonly from?: number;
  /** Buckets starting before this are included, UTC epoch ms (exclusive); default: no bound. */
  readonly to?: number;
  /** Only this camera; default all. */
  readonly camera?: string;
  /** Only zones with this id; default all. */
  readonly zone?: string;
}

export interface RollupStore {
  /** Rollup rows in range, ordered by camera, zone, bucket start. */
  listRollups(query?: RollupQuery): Rollup[];
  /**
   * Recomputes the buckets starting in `[from, to)` (widened to whole buckets) from the samples
   * table with one SQL aggregate, replacing what the incremental updates wrote; returns the range
   * rebuilt and the number of rollup rows written. `from` defaults to the retention horizon (the
   * cutoff of the last `pruneSamples`), `to` to no bound. Throws when `from` lies before that
   * horizon: pruned samples cannot be recomputed, and rollups there are kept as they are.
   */
  rebuildRollups(from?: number, to?: number): { from: number; to: number; rows: number };
}

/** Upper bound used when no `to` is given: beyond any epoch ms the store accepts. */
const NO_BOUND = 9_000_000_000_000_000;

/** What samples.ts needs to keep rollups current, inside its own transaction. */
export interface RollupWriter {
  /** Adds one (already validated) sample's pieces to the rollups. */
  add(sample: { camera: string; zone: string; time: number; intervalMs: number; value: number; quality: number }): void;
}

/**
 * Prepares the incremental writer. The arithmetic on values (`round(value × 10⁶)`, `value > 0`)
 * is done by SQLite in both this statement and the rebuild query, on the same stored double, so
 * the two agree exactly.
 */
export function prepareRollupWriter(db: Database.Database): RollupWriter {
  const upsert = db.prepare(`
    INSERT INTO rollups (camera, zone, bucket_start, samples, weighted_sum, value_min, value_max,
                         occupied_ms, flagged_ms, covered_ms)
    VALUES (@camera, @zone, CAST(@bucket AS INTEGER), CAST(@ends AS INTEGER),
            CAST(round(@value * ${VALUE_SCALE}) AS INTEGER) * CAST(@overlap AS INTEGER),
            @value, @value,
            CASE WHEN @value > 0 THEN CAST(@overlap AS INTEGER) ELSE 0 END,
            CASE WHEN @quality != 0 THEN CAST(@overlap AS INTEGER) ELSE 0 END,
            CAST(@overlap AS INTEGER))
    ON CONFLICT (camera, zone, bucket_start) DO UPDATE SET
      samples      = samples + excluded.samples,
      weighted_sum = weighted_sum + excluded.weighted_sum,
      value_min    = min(value_min, excluded.value_min),
      value_max    = max(value_max, excluded.value_max),
      occupied_ms  = occupied_ms + excluded.occupied_ms,
      flagged_ms   = flagged_ms + excluded.flagged_ms,
      covered_ms   = covered_ms + excluded.covered_ms
  `);
  return {
    add(s) {
      for (const piece of bucketPieces(s.time, s.intervalMs)) {
        upsert.run({
          camera: s.camera,
          zone: s.zone,
          bucket: piece.bucketStart,
          ends: piece.ends ? 1 : 0,
          value: s.value,
          quality: s.quality,
          overlap: piece.overlapMs,
        });
      }
    },
  };
}

interface RollupRowSql {
  camera: string;
  zone: string;
  bucket_start: number;
  samples: number;
  weighted_sum: number;
  value_min: number;
  value_max: number;
  occupied_ms: number;
  flagged_ms: number;
  covered_ms: number;
}

function toRollup(r: RollupRowSql): Rollup {
  return {
    camera: r.camera,
    zone: r.zone,
    bucketStart: r.bucket_start,
    samples: r.samples,
    weightedSum: r.weighted_sum,
    min: r.value_min,
    max: r.value_max,
    occupiedMs: r.occupied_ms,
    flaggedMs: r.flagged_ms,
    coveredMs: r.covered_ms,
  };
}

/** Buckets a sample can touch: its interval spans at most MAX_INTERVAL_MS / BUCKET_MS + 1 of them. */
const OFFSETS = Array.from({ length: MAX_INTERVAL_MS / BUCKET_MS + 1 }, (_, n) => `(${n})`).join(', ');

/** Prepares the read and rebuild statements; `horizon()` returns the retention horizon, epoch ms. */
export function prepareRollups(db: Database.Database, horizon: () => number): RollupStore {
  const list = db.prepare(`
    SELECT camera, zone, bucket_start, samples, weighted_sum, value_min, value_max,
           occupied_ms, flagged_ms, covered_ms
    FROM rollups
    WHERE bucket_start >= @from AND bucket_start < @to
      AND (@camera IS NULL OR camera = @camera) AND (@zone IS NULL OR zone = @zone)
    ORDER BY camera, zone, bucket_start
  `);
  const remove = db.prepare('DELETE FROM rollups WHERE bucket_start >= @from AND bucket_start < @to');
  // Independent of the incremental path: split every sample with a join against bucket offsets.
  const recompute = db.prepare(`
    INSERT INTO rollups (camera, zone, bucket_start, samples, weighted_sum, value_min, value_max,
                         occupied_ms, flagged_ms, covered_ms)
    WITH k (n) AS (VALUES ${OFFSETS}),
    pieces AS (
      SELECT s.camera, s.zone, s.time, s.value, s.quality,
             ((s.time - s.interval_ms) / ${BUCKET_MS} + k.n) * ${BUCKET_MS} AS bucket_start,
             min(s.time, ((s.time - s.interval_ms) / ${BUCKET_MS} + k.n + 1) * ${BUCKET_MS})
               - max(s.time - s.interval_ms, ((s.time - s.interval_ms) / ${BUCKET_MS} + k.n) * ${BUCKET_MS})
               AS overlap
      FROM samples AS s CROSS JOIN k
      WHERE s.time > @from AND s.time < @to + ${MAX_INTERVAL_MS} AND s.time - s.interval_ms < @to
    )
    SELECT camera, zone, bucket_start,
           sum(CASE WHEN (time - 1) / ${BUCKET_MS} * ${BUCKET_MS} = bucket_start THEN 1 ELSE 0 END),
           sum(CAST(round(value * ${VALUE_SCALE}) AS INTEGER) * overlap),
           min(value), max(value),
           sum(CASE WHEN value > 0 THEN overlap ELSE 0 END),
           sum(CASE WHEN quality != 0 THEN overlap ELSE 0 END),
           sum(overlap)
    FROM pieces
    WHERE overlap > 0 AND bucket_start >= @from AND bucket_start < @to
    GROUP BY camera, zone, bucket_start
  `);
  const rebuild = db.transaction((from: number, to: number) => {
    remove.run({ from, to });
    return recompute.run({ from, to }).changes;
  });

  return {
    listRollups(query = {}) {
      const { from = 0, to = NO_BOUND, camera = null, zone = null } = query;
      if (camera !== null) checkId(camera, 'query.camera');
      if (zone !== null) checkId(zone, 'query.zone');
      const rows = list.all({ from, to, camera, zone }) as RollupRowSql[];
      return rows.map(toRollup);
    },
    rebuildRollups(from?: number, to?: number) {
      const pruned = horizon();
      const start = from === undefined ? pruned : Math.floor(checkEpochMs(from, 'rebuildRollups from') / BUCKET_MS) * BUCKET_MS;
      const end = to === undefined ? NO_BOUND : Math.ceil(checkEpochMs(to, 'rebuildRollups to') / BUCKET_MS) * BUCKET_MS;
      if (start < pruned) {
        throw new RangeError(
          `rebuildRollups from: ${new Date(start).toISOString()} is before the retention horizon ` +
            `${new Date(pruned).toISOString()}; samples there were pruned, their rollups cannot be rebuilt`,
        );
      }
      if (end < start) throw new RangeError(`rebuildRollups to: must not be before from`);
      const rows = rebuild.immediate(start, end);
      return { from: start, to: end, rows };
    },
  };
}
