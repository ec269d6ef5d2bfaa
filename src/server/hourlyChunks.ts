import type { Writable } from 'node:stream';
import { setImmediate as nextTurn } from 'node:timers/promises';
import { hourlyRows, type HourlyRow, type HourlySource } from '../outputs/hourlyCsv.ts';
import { localHours } from '../outputs/localHours.ts';
import { parseTimeBound } from '../outputs/parseTimeBound.ts';
import { HttpError } from './HttpError.ts';

/** Longest range of one history or export request, days. */
export const MAX_RANGE_DAYS = 400;

/**
 * Local hours per chunk: a day, a few hundred rollup rows for a handful of zones and a couple of
 * milliseconds of work (a week took 20 ms, and four exports take turns, so /api/live waited up to
 * four chunks).
 */
export const CHUNK_HOURS = 24;

export interface HourlyRange {
  readonly from: string;
  readonly to: string;
  readonly camera?: string;
  readonly zone?: string;
  readonly timeZone: string;
  /** The present, UTC epoch ms (default `Date.now()`): hours that have not begun have no row. */
  readonly now?: number;
}

export interface CheckedRange {
  /** The range as UTC epoch ms, end exclusive; `end` cut at the end of the current local hour (`start` when the range has not begun). */
  readonly start: number;
  readonly end: number;
  /** Hours in the range (elapsed, rounded up). */
  readonly hours: number;
  /**
   * Rows of the range in chunks of {@link CHUNK_HOURS} local hours, with a turn of the event loop
   * between chunks. The first chunk throws HttpError 400 for an unknown camera or zone.
   */
  chunks(): AsyncGenerator<HourlyRow[]>;
}

/**
 * Checks a history or export range and reads its hourly rows a day at a time, yielding to the
 * event loop between days, so that a long range read on the main thread never holds up the live
 * answers for longer than one day's query (a few ms). The rows are exactly those of
 * `hourlyRows` over the whole range: chunks are cut at the start of a local hour. The local hours
 * of the whole range are never listed at once (for 400 days that alone took 0.7 s).
 *
 * Throws HttpError 400 naming the field: a bound that does not parse, `to` not after `from`, a
 * range over {@link MAX_RANGE_DAYS} days.
 */
export function checkHourlyRange(store: HourlySource, range: HourlyRange): CheckedRange {
  const { from, to, camera, zone, timeZone, now = Date.now() } = range;
  let start: number;
  let end: number;
  try {
    start = parseTimeBound(from, { name: 'from', timeZone });
    end = parseTimeBound(to, { name: 'to', timeZone });
  } catch (error) {
    throw new HttpError(400, (error as Error).message);
  }
  if (end <= start) throw new HttpError(400, `to: ${JSON.stringify(to)} is not after from ${JSON.stringify(from)}`);
  // A day is at most 25 hours (DST); the bound is on the instants, so it cannot be got round.
  if (end - start > MAX_RANGE_DAYS * 86_400_000 + 3_600_000) {
    throw new HttpError(400, `to: the range from ${from} to ${to} is ${Math.ceil((end - start) / 86_400_000)} days; at most ${MAX_RANGE_DAYS} days per request (ask for it in parts)`);
  }
  const read = (a: number, b: number) => hourlyRows(store, { from: a, to: b, now, timeZone, ...(camera && { camera }), ...(zone && { zone }) });
  /** The start of the local hour containing `t`. */
  const hourStart = (t: number) => localHours({ from: t, to: t + 1 }, { timeZone })[0].start;
  // No row, chart place or CSV line for an hour that has not begun.
  const begun = Math.min(end, localHours({ from: now, to: now + 1 }, { timeZone })[0].end);
  const stop = begun > start ? begun : end;
  return {
    start,
    end: begun > start ? begun : start,
    hours: Math.ceil((end - start) / 3_600_000),
    async *chunks() {
      let a = start;
      let b = Math.min(stop, hourStart(start + CHUNK_HOURS * 3_600_000));
      if (b <= a) b = stop;
      try {
        yield read(a, b);
      } catch (error) {
        throw new HttpError(400, (error as Error).message);
      }
      while (b < stop) {
        a = b;
        b = Math.min(stop, hourStart(a + CHUNK_HOURS * 3_600_000));
        await nextTurn();
        yield read(a, b);
      }
    },
  };
}

/** Writes `text`; when the response's buffer is full, waits until it drains or the client leaves. */
export async function writeChunk(out: Writable, text: string): Promise<void> {
  if (text === '' || out.write(text)) return;
  await new Promise<void>((done) => {
    const finish = () => {
      out.off('drain', finish);
      out.off('close', finish);
      done();
    };
    out.once('drain', finish);
    out.once('close', finish);
  });
}

/** The chunks of `rest`, after the `first` result already taken from it. */
export async function* prepend<T>(first: IteratorResult<T>, rest: AsyncGenerator<T>): AsyncGenerator<T> {
  if (first.done) return;
  yield first.value;
  yield* rest;
}
