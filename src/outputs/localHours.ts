import { wallClock, zoneOffset } from './zoneOffset.ts';

/**
 * Local hours of an IANA time zone, built from UTC quarter hours (the store's rollup buckets).
 *
 * A local hour is the stretch of real time whose wall clock shows one date and hour at one UTC
 * offset. Since every offset in use is a multiple of 15 minutes and the tz database switches
 * offsets on quarter-hour instants, each UTC quarter hour `[q, q + 15 min)` lies in exactly one
 * local hour: the one labelled by the wall clock at `q`. Grouping consecutive quarter hours with
 * the same label gives the local hours, including the odd ones: the hour skipped at a spring-forward
 * does not appear (a 23-hour day), the repeated hour at a fall-back appears twice with different
 * offsets (a 25-hour day), and a 30-minute DST shift (Australia/Lord_Howe) yields one 30-minute
 * hour (02:30–03:00 at spring-forward; the repeated 01:30–02:00 at fall-back). India (+05:30) and
 * Nepal (+05:45) hours start at :30 and :15 past a UTC hour.
 *
 * Throws when the zone's offset is not a multiple of 15 minutes in the range (historical local mean
 * time, e.g. Asia/Kolkata before 1942).
 */

/** Rollup bucket length the hours are built from, ms (same as the store's). */
export const QUARTER_MS = 900_000;
const HOUR_MS = 3_600_000;

export interface LocalHour {
  /** First instant, UTC epoch ms (inclusive); a multiple of 15 minutes. */
  readonly start: number;
  /** End, UTC epoch ms (exclusive); `end − start` is one hour except around an offset change. */
  readonly end: number;
  /** UTC offset during this hour, minutes east of UTC (Berlin summer 120, Kolkata 330). */
  readonly offsetMinutes: number;
}

export interface LocalHoursOptions {
  /** IANA zone; default `UTC`. */
  readonly timeZone?: string;
  /** Most hours returned before throwing (guards a mistyped year); default 24 × 366 × 10, ≥ 1. */
  readonly maxHours?: number;
}

interface Label {
  /** Local wall-clock hour number: floor((utc + offset) / 1 h). */
  readonly hour: number;
  readonly offset: number;
}

function labelAt(q: number, timeZone: string): Label {
  const offset = zoneOffset(q, timeZone);
  if (!Number.isInteger(offset) || offset % 15 !== 0) {
    throw new RangeError(
      `timeZone: ${timeZone} is ${offset} min from UTC at ${new Date(q).toISOString()}, not a multiple of 15 min; ` +
        'its local hours cannot be built from quarter-hour rollups',
    );
  }
  return { hour: Math.floor((q + offset * 60_000) / HOUR_MS), offset };
}

const same = (a: Label, b: Label): boolean => a.hour === b.hour && a.offset === b.offset;

/**
 * The local hours that intersect `[from, to)` (UTC epoch ms), in time order; the first may start
 * before `from` and the last end after `to`, so every hour is whole. Empty when `to ≤ from`.
 *
 * Example: Europe/Berlin, 2026-10-25 00:00+02:00 to 2026-10-26 00:00+01:00 gives 25 hours, with
 * `02:00+02:00` and `02:00+01:00` both present.
 */
export function localHours(range: { from: number; to: number }, options: LocalHoursOptions = {}): LocalHour[] {
  const { timeZone = 'UTC', maxHours = 24 * 366 * 10 } = options;
  const { from, to } = range;
  if (!Number.isFinite(from) || !Number.isFinite(to)) throw new RangeError('range: from and to must be finite epoch ms');
  const hours: LocalHour[] = [];
  if (to <= from) return hours;
  let q = Math.floor(from / QUARTER_MS) * QUARTER_MS;
  let label = labelAt(q, timeZone);
  // Walk back to the first quarter of the hour containing `from` (at most 3 steps).
  for (let i = 0; i < 4; i++) {
    const previous = labelAt(q - QUARTER_MS, timeZone);
    if (!same(previous, label)) break;
    q -= QUARTER_MS;
  }
  let start = q;
  for (;;) {
    q += QUARTER_MS;
    const next = labelAt(q, timeZone);
    if (!same(next, label)) {
      hours.push({ start, end: q, offsetMinutes: label.offset });
      if (hours.length > maxHours) throw new RangeError(`range: more than ${maxHours} hours between from and to`);
      if (q >= to) return hours;
      start = q;
      label = next;
    }
  }
}

/**
 * First instant of a local calendar date in `timeZone`, UTC epoch ms: local midnight, or the first
 * instant after it when midnight is skipped by a DST change. `month` 1..12, `day` 1..31.
 */
export function localDayStart(date: { year: number; month: number; day: number }, timeZone = 'UTC'): number {
  const d = new Date(0);
  d.setUTCFullYear(date.year, date.month - 1, date.day);
  const nominal = d.getTime();
  const target = date.year * 10_000 + date.month * 100 + date.day;
  // Offsets lie within −12:00..+14:00, so local midnight is in [nominal − 14 h, nominal + 12 h].
  for (let q = nominal - 15 * HOUR_MS; q <= nominal + 13 * HOUR_MS; q += QUARTER_MS) {
    labelAt(q, timeZone);
    const w = wallClock(q, timeZone);
    if (w.year * 10_000 + w.month * 100 + w.day >= target) return q;
  }
  throw new RangeError(`timeZone: no start of day found for ${date.year}-${date.month}-${date.day} in ${timeZone}`);
}
