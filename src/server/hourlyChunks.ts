import type { Writable } from 'node:stream';
import { setImmediate as nextTurn } from 'node:timers/promises';
import { hourlyRows, type HourlyRow, type HourlySource } from '../outputs/hourlyCsv.ts';
import { localHours } from '../outputs/localHours.ts';
import { parseTimeBound } from '../outputs/parseTimeBound.ts';
import { HttpError } from './HttpError.ts';

/** Longest range of one history or export request, days. */
export const MAX_RANGE_DAYS = 400;

/** Local hours per chunk: a week, a few thousand rollup rows for a handful of zones. */
export const CHUNK_HOURS = 168;

export interface HourlyRange {
  readonly from: string;
  readonly to: string;
  readonly camera?: string;
  readonly zone?: string;
  readonly timeZone: string;
}

export interface CheckedRange {
  /** The range as UTC epoch ms, end exclusive. */
  readonly start: number;
  readonly end: number;
  /** Local hours in the range. */
  readonly hours: number;
  /** Rows of the range in chunks of {@link CHUNK_HOURS} local hours, the first one already read. */
  chunks(): AsyncGenerator<HourlyRow[]>;
}

/**
 * Checks a history or export range and reads its hourly rows a week at a time, yielding to the
 * event loop between weeks, so that a long range read on the main thread never holds up the live
 * answers for longer than one week's query (a few ms). The rows are exactly those of
 * `hourlyRows` over the whole range: chunks end on local hour boundaries.
 *
 * Throws HttpError 400 naming the field: a bound that does not parse, `to` not after `from`, a
 * range over {@link MAX_RANGE_DAYS} days, an unknown camera or zone (checked on the first chunk,
 * before any byte is sent).
 */
export function checkHourlyRange(store: HourlySource, range: HourlyRange): CheckedRange {
  const { from, to, camera, zone, timeZone } = range;
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
  const hours = localHours({ from: start, to: end }, { timeZone });
  const read = (a: number, b: number) => hourlyRows(store, { from: hours[a].start, to: hours[b - 1].end, timeZone, ...(camera && { camera }), ...(zone && { zone }) });
  let first: HourlyRow[] = [];
  try {
    if (hours.length > 0) first = read(0, Math.min(CHUNK_HOURS, hours.length));
  } catch (error) {
    throw new HttpError(400, (error as Error).message);
  }
  return {
    start,
    end,
    hours: hours.length,
    async *chunks() {
      yield first;
      for (let a = CHUNK_HOURS; a < hours.length; a += CHUNK_HOURS) {
        await nextTurn();
        yield read(a, Math.min(a + CHUNK_HOURS, hours.length));
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
