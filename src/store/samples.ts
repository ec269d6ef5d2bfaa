import type Database from 'better-sqlite3';
import { MAX_INTERVAL_MS, type RollupWriter } from './rollups.ts';
import { checkEpochMs, checkId, checkInt, checkNumber, checkOneOf } from './validate.ts';

/**
 * Per-zone samples in SQLite (what a sample is: src/domain/sample.ts).
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

export {
  MAX_COUNT,
  QUALITY_MASK,
  QualityFlag,
  SAMPLE_KIND_OF_ZONE,
  SampleKind,
  type Sample,
  type StoredSample,
} from '../domain/sample.ts';
import { MAX_COUNT, QUALITY_MASK, SAMPLE_KIND_OF_ZONE, SampleKind, type Sample, type StoredSample } from '../domain/sample.ts';

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
