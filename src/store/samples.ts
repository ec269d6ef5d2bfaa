import type Database from 'better-sqlite3';
import { MAX_INTERVAL_MS, type RollupWriter } from './rollups.ts';
import { checkEpochMs, checkId, checkInt, checkNumber, checkOneOf } from './validate.ts';

/**
 * Per-zone samples: what counting reports every few seconds for each camera and zone.
 *
 * A sample at `time` t with `intervalMs` i stands for the half-open interval `[t − i, t)`: the
 * counter measured `value` over that stretch. Intervals of one zone must not overlap (the store
 * refuses an overlapping sample), so coverage adds up. After an outage the counter simply starts
 * sampling again with its normal interval: the outage is a stretch with no samples, never rows of
 * zeros, and the rollups' `covered_ms` shows it.
 *
 * Durability: {@link SampleStore.insertSample} is one transaction and {@link
 * SampleStore.insertSamples} one transaction for the whole batch; each is committed when the call
 * returns. The database runs WAL with `synchronous=NORMAL`, so a committed sample survives the
 * process being killed (even `kill -9`): the commit has been written to the WAL file and the OS
 * holds it. A power loss or OS crash may roll back the last commits since the WAL was last synced
 * to disk (SQLite documentation, https://www.sqlite.org/pragma.html#pragma_synchronous: "A
 * transaction committed in WAL mode with synchronous=NORMAL might roll back following a power loss
 * or system crash. Transactions are durable across application crashes regardless of the
 * synchronous setting or journal mode."). The sample and its rollup updates commit together or not
 * at all.
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

export interface SampleQuery {
  readonly camera: string;
  readonly zone: string;
  /** Samples with time ≥ from, UTC epoch ms (inclusive); default 0. */
  readonly from?: number;
  /** Samples with time < to, UTC epoch ms (exclusive); default no bound. */
  readonly to?: number;
}

export interface SampleStore {
  /** Validates and stores one sample and updates its rollups, in one committed transaction. */
  insertSample(sample: Sample): void;
  /** Stores many samples in one committed transaction (all or none); returns how many. */
  insertSamples(samples: readonly Sample[]): number;
  /** One zone's samples in a time range, oldest first. */
  listSamples(query: SampleQuery): StoredSample[];
  /** The zone's newest sample, if any (lets a restarted counter continue without overlap). */
  lastSample(camera: string, zone: string): StoredSample | undefined;
}

interface SampleRowSql {
  camera: string;
  zone: string;
  time: number;
  interval_ms: number;
  value: number;
  kind: SampleKind;
  quality: number;
}

function toSample(r: SampleRowSql): StoredSample {
  return { time: r.time, camera: r.camera, zone: r.zone, value: r.value, kind: r.kind, intervalMs: r.interval_ms, quality: r.quality };
}

/** Checks a sample's fields; returns it with `quality` filled in. */
export function validateSample(sample: Sample, field = 'sample'): StoredSample {
  if (typeof sample !== 'object' || sample === null) throw new TypeError(`${field}: expected an object`);
  const camera = checkId(sample.camera, `${field}.camera`);
  const zone = checkId(sample.zone, `${field}.zone`);
  const time = checkEpochMs(sample.time, `${field}.time`);
  const intervalMs = checkInt(sample.intervalMs, `${field}.intervalMs`, 1, MAX_INTERVAL_MS);
  if (intervalMs > time) throw new RangeError(`${field}.intervalMs: interval starts before 1970 (time ${time})`);
  const kind = checkOneOf(sample.kind, `${field}.kind`, SampleKind);
  const value = checkNumber(sample.value, `${field}.value`, 0, kind === SampleKind.count ? MAX_COUNT : 1);
  const quality = checkInt(sample.quality ?? 0, `${field}.quality`, 0, QUALITY_MASK);
  if ((quality & ~QUALITY_MASK) !== 0) throw new RangeError(`${field}.quality: unknown flag bits in ${quality}`);
  return { time, camera, zone, value, kind, intervalMs, quality };
}

export function prepareSamples(db: Database.Database, rollups: RollupWriter): SampleStore {
  const zoneKind = db.prepare('SELECT kind, removed FROM zones WHERE camera = ? AND id = ?');
  // An existing sample [s.time − s.interval, s.time) overlaps [start, end) iff s.time > start and
  // s.time − s.interval < end; s.time < end + MAX_INTERVAL_MS bounds the index range scan.
  const overlapping = db.prepare(`
    SELECT time, interval_ms FROM samples
    WHERE camera = @camera AND zone = @zone AND time > @start AND time < @end + ${MAX_INTERVAL_MS}
      AND time - interval_ms < @end
    LIMIT 1
  `);
  // Sequence numbers (schema version 3): per camera, in commit order, never reused (see sequence.ts).
  const nextSeq = db.prepare('UPDATE cameras SET sample_seq = sample_seq + 1 WHERE id = ? RETURNING sample_seq AS seq');
  const insert = db.prepare(`
    INSERT INTO samples (camera, zone, time, interval_ms, value, kind, quality, seq)
    VALUES (@camera, @zone, @time, @intervalMs, @value, @kind, @quality, @seq)
  `);
  const list = db.prepare(`
    SELECT camera, zone, time, interval_ms, value, kind, quality FROM samples
    WHERE camera = @camera AND zone = @zone AND time >= @from AND time < @to ORDER BY time
  `);
  const last = db.prepare(`
    SELECT camera, zone, time, interval_ms, value, kind, quality FROM samples
    WHERE camera = ? AND zone = ? ORDER BY time DESC LIMIT 1
  `);

  function insertOne(input: Sample, field: string): void {
    const s = validateSample(input, field);
    const z = zoneKind.get(s.camera, s.zone) as { kind: 'room' | 'shelf'; removed: number | null } | undefined;
    if (z === undefined) throw new RangeError(`${field}.zone: no zone '${s.zone}' on camera '${s.camera}'; add it with upsertZone first`);
    // A removed zone still takes the interval that was open when it was removed (measured while it
    // existed; the camera thread writes it just after the removal), nothing that starts later.
    if (z.removed !== null && s.time - s.intervalMs >= z.removed) {
      throw new RangeError(`${field}.zone: zone '${s.camera}/${s.zone}' was removed at ${new Date(z.removed).toISOString()}, before this interval began`);
    }
    const expected = SAMPLE_KIND_OF_ZONE[z.kind];
    if (s.kind !== expected) {
      throw new RangeError(`${field}.kind: zone '${s.camera}/${s.zone}' is a ${z.kind} zone and takes '${expected}' samples, got '${s.kind}'`);
    }
    const clash = overlapping.get({ camera: s.camera, zone: s.zone, start: s.time - s.intervalMs, end: s.time }) as
      | { time: number; interval_ms: number }
      | undefined;
    if (clash !== undefined) {
      throw new RangeError(
        `${field}.time: interval [${new Date(s.time - s.intervalMs).toISOString()}, ${new Date(s.time).toISOString()}) ` +
          `of '${s.camera}/${s.zone}' overlaps the stored sample covering ` +
          `[${new Date(clash.time - clash.interval_ms).toISOString()}, ${new Date(clash.time).toISOString()})`,
      );
    }
    const { seq } = nextSeq.get(s.camera) as { seq: number };
    insert.run({ ...s, seq });
    rollups.add(s);
  }

  const one = db.transaction((sample: Sample) => insertOne(sample, 'sample'));
  const many = db.transaction((samples: readonly Sample[]) => {
    samples.forEach((s, i) => insertOne(s, `samples[${i}]`));
    return samples.length;
  });

  return {
    insertSample(sample) {
      one.immediate(sample);
    },
    insertSamples(samples) {
      if (!Array.isArray(samples)) throw new TypeError('samples: expected an array');
      return many.immediate(samples);
    },
    listSamples(query) {
      const camera = checkId(query?.camera, 'query.camera');
      const zone = checkId(query?.zone, 'query.zone');
      const { from = 0, to = Number.MAX_SAFE_INTEGER } = query;
      return (list.all({ camera, zone, from, to }) as SampleRowSql[]).map(toSample);
    },
    lastSample(camera, zone) {
      const row = last.get(checkId(camera, 'camera'), checkId(zone, 'zone')) as SampleRowSql | undefined;
      return row === undefined ? undefined : toSample(row);
    },
  };
}
