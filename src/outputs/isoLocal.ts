import { wallClock, zoneOffset } from './zoneOffset.ts';

export interface IsoLocalOptions {
  /** IANA zone whose wall clock and offset are printed; default `UTC` (printed `+00:00`, not `Z`). */
  readonly timeZone?: string;
  /** Print `.sss` milliseconds: `auto` only when not zero; default `auto`. */
  readonly milliseconds?: 'auto' | 'always' | 'never';
}

const pad = (n: number, width = 2): string => String(n).padStart(width, '0');

/**
 * Formats UTC epoch ms as ISO 8601 extended local date and time with the zone's UTC offset,
 * `YYYY-MM-DDThh:mm:ss[.sss]±hh:mm` (ISO 8601-1, "local time and the difference from UTC"; the same
 * shape as RFC 3339 `date-time`). The wall clock and offset come from the IANA tz database in
 * Node's ICU, so the repeated hour at a fall-back prints twice with different offsets:
 *
 * ```ts
 * isoLocal(Date.UTC(2026, 9, 25, 0), { timeZone: 'Europe/Berlin' }) // '2026-10-25T02:00:00+02:00'
 * isoLocal(Date.UTC(2026, 9, 25, 1), { timeZone: 'Europe/Berlin' }) // '2026-10-25T02:00:00+01:00'
 * ```
 *
 * `new Date(result).getTime()` gives back `ms` (whole ms; `never` drops them). Offsets with
 * seconds (historical local mean time only) print as `±hh:mm:ss`, which is not ISO 8601 extended.
 */
export function isoLocal(ms: number, options: IsoLocalOptions = {}): string {
  const { timeZone = 'UTC', milliseconds = 'auto' } = options;
  if (!Number.isInteger(ms) || ms < -62_135_596_800_000 || ms > 253_402_300_799_999) {
    throw new RangeError(`ms: expected an integer epoch time in years 1..9999, got ${ms}`);
  }
  const w = wallClock(ms, timeZone);
  const offsetSeconds = Math.round(zoneOffset(ms, timeZone) * 60);
  const abs = Math.abs(offsetSeconds);
  const sign = offsetSeconds < 0 ? '-' : '+';
  const offset = `${sign}${pad(Math.floor(abs / 3600))}:${pad(Math.floor(abs / 60) % 60)}${abs % 60 === 0 ? '' : `:${pad(abs % 60)}`}`;
  const frac = ((ms % 1000) + 1000) % 1000;
  const showMs = milliseconds === 'always' || (milliseconds === 'auto' && frac !== 0);
  return (
    `${pad(w.year, 4)}-${pad(w.month)}-${pad(w.day)}T${pad(w.hour)}:${pad(w.minute)}:${pad(w.second)}` +
    `${showMs ? `.${pad(frac, 3)}` : ''}${offset}`
  );
}
