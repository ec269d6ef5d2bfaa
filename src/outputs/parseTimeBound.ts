import { localDayStart } from './localHours.ts';
import { wallClockFormatter } from './zoneOffset.ts';

export interface ParseTimeBoundOptions {
  /** Parameter name used in error messages and deciding date semantics: `from` or `to`; default `from`. */
  readonly name?: 'from' | 'to';
  /** IANA zone in which a date `YYYY-MM-DD` is a local calendar date; default `UTC`. */
  readonly timeZone?: string;
}

const DATE = /^(\d{4})-(\d{2})-(\d{2})$/;
// ISO 8601 extended date-time with a required offset: YYYY-MM-DDThh:mm[:ss[.s…]](Z|±hh:mm).
const TIMESTAMP = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2})(?:\.(\d{1,9}))?)?(Z|[+-]\d{2}:\d{2})$/;

function daysInMonth(year: number, month: number): number {
  const d = new Date(0);
  d.setUTCFullYear(year, month, 0);
  return d.getUTCDate();
}

/**
 * Parses a range bound of the hourly export into UTC epoch ms:
 * - a local date `YYYY-MM-DD` in `timeZone`: for `from` the start of that day, for `to` the start
 *   of the next day (`to` dates are inclusive: `from=2026-03-29&to=2026-03-29` is one day);
 * - an ISO 8601 timestamp with `Z` or an offset (`2026-03-29T03:00:00+02:00`), an exact instant
 *   (for `to`, exclusive). A timestamp without an offset is refused: at a fall-back it is ambiguous;
 * - an integer epoch ms, taken as is.
 * Errors name the parameter: `to: expected a date YYYY-MM-DD, an ISO 8601 timestamp with offset…`.
 */
export function parseTimeBound(value: string | number, options: ParseTimeBoundOptions = {}): number {
  const { name = 'from', timeZone = 'UTC' } = options;
  wallClockFormatter(timeZone);
  const expected = `expected a date YYYY-MM-DD, an ISO 8601 timestamp with offset (2026-03-29T03:00:00+02:00) or epoch ms, got ${JSON.stringify(value)}`;
  if (typeof value === 'number') {
    if (!Number.isInteger(value) || value < 0 || value > 253_402_300_799_999) throw new RangeError(`${name}: ${expected}`);
    return value;
  }
  if (typeof value !== 'string') throw new TypeError(`${name}: ${expected}`);
  const date = DATE.exec(value);
  const stamp = date === null ? TIMESTAMP.exec(value) : null;
  const m = date ?? stamp;
  if (m === null) throw new RangeError(`${name}: ${expected}`);
  const year = Number(m[1]);
  const month = Number(m[2]);
  const day = Number(m[3]);
  if (year < 1970 || month < 1 || month > 12 || day < 1 || day > daysInMonth(year, month)) {
    throw new RangeError(`${name}: no such date ${m[1]}-${m[2]}-${m[3]} (years from 1970)`);
  }
  if (date !== null) {
    if (name === 'to') {
      const next = new Date(0);
      next.setUTCFullYear(year, month - 1, day + 1);
      return localDayStart({ year: next.getUTCFullYear(), month: next.getUTCMonth() + 1, day: next.getUTCDate() }, timeZone);
    }
    return localDayStart({ year, month, day }, timeZone);
  }
  const s = stamp as RegExpExecArray;
  const hour = Number(s[4]);
  const minute = Number(s[5]);
  const second = s[6] === undefined ? 0 : Number(s[6]);
  const ms = s[7] === undefined ? 0 : Math.floor(Number(`0.${s[7]}`) * 1000 + 1e-6);
  if (hour > 23 || minute > 59 || second > 59) throw new RangeError(`${name}: no such time of day in ${JSON.stringify(value)}`);
  let offsetMin = 0;
  if (s[8] !== 'Z') {
    const oh = Number(s[8].slice(1, 3));
    const om = Number(s[8].slice(4, 6));
    if (oh > 23 || om > 59) throw new RangeError(`${name}: no such UTC offset ${s[8]}`);
    offsetMin = (s[8][0] === '-' ? -1 : 1) * (oh * 60 + om);
  }
  const d = new Date(0);
  d.setUTCFullYear(year, month - 1, day);
  d.setUTCHours(hour, minute, second, ms);
  return d.getTime() - offsetMin * 60_000;
}
