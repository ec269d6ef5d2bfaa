import type Database from 'better-sqlite3';
import type { StoredSample } from './samples.ts';
import { checkId, checkInt } from './validate.ts';

/**
 * Sequence numbers of samples (schema version 3): every sample a camera stores gets the next
 * number of that camera, 1, 2, 3 …, in commit order (one camera's samples are written by one
 * thread). A number is never given twice, also after retention pruned the samples (the last one
 * given is kept in `cameras.sample_seq`). Samples stored before version 3 have none.
 *
 * They let a site and a collector agree on what arrived: the collector confirms "everything of
 * camera C up to number N", and the site sends again whatever is above N (src/outputs/mqtt).
 *
 * Example: after three samples of camera door, `sequenceRange('door')` → `{ first: 1, last: 3 }`.
 */

/** A stored sample with its sequence number. */
export interface SequencedSample extends StoredSample {
  readonly seq: number;
}

export interface SequenceStore {
  /** The camera's samples with seq > afterSeq, in seq order, at most `limit` (1..10 000, default 500). */
  samplesAfter(camera: string, afterSeq: number, limit?: number): SequencedSample[];
  /** The lowest seq still stored (0 when none is) and the last seq given (0 when none was) of the camera. */
  sequenceRange(camera: string): { first: number; last: number };
}

interface Row {
  camera: string;
  zone: string;
  time: number;
  interval_ms: number;
  value: number;
  kind: 'count' | 'fill';
  quality: number;
  seq: number;
}

export function prepareSequence(db: Database.Database): SequenceStore {
  const after = db.prepare(`
    SELECT camera, zone, time, interval_ms, value, kind, quality, seq FROM samples
    WHERE camera = ? AND seq > ? ORDER BY seq LIMIT ?
  `);
  const first = db.prepare('SELECT min(seq) AS first FROM samples WHERE camera = ? AND seq IS NOT NULL');
  const last = db.prepare('SELECT sample_seq AS last FROM cameras WHERE id = ?');
  return {
    samplesAfter(camera, afterSeq, limit = 500) {
      const id = checkId(camera, 'camera');
      const from = checkInt(afterSeq, 'afterSeq', 0, Number.MAX_SAFE_INTEGER);
      const n = checkInt(limit, 'limit', 1, 10_000);
      return (after.all(id, from, n) as Row[]).map((r) => ({
        time: r.time,
        camera: r.camera,
        zone: r.zone,
        value: r.value,
        kind: r.kind,
        intervalMs: r.interval_ms,
        quality: r.quality,
        seq: r.seq,
      }));
    },
    sequenceRange(camera) {
      const id = checkId(camera, 'camera');
      const l = (last.get(id) as { last: number } | undefined)?.last ?? 0;
      const f = (first.get(id) as { first: number | null }).first;
      return { first: f ?? 0, last: l };
    },
  };
}
