/**
 * UTC offset of an IANA time zone at an instant, from the tz database in Node's ICU via
 * `Intl.DateTimeFormat`: format the instant's wall-clock fields in the zone, read them back as if
 * they were UTC, and subtract the instant. Example: `zoneOffset(Date.UTC(2026, 6, 1), 'Europe/Berlin')`
 * is 120 (CEST, UTC+02:00).
 */

const formatters = new Map<string, Intl.DateTimeFormat>();

/** A cached formatter for the zone's wall-clock fields; throws a RangeError naming `field` for an unknown zone. */
export function wallClockFormatter(timeZone: string, field = 'timeZone'): Intl.DateTimeFormat {
  let f = formatters.get(timeZone);
  if (f === undefined) {
    try {
      f = new Intl.DateTimeFormat('en-US', {
        timeZone,
        hourCycle: 'h23',
        year: 'numeric',
        month: 'numeric',
        day: 'numeric',
        hour: 'numeric',
        minute: 'numeric',
        second: 'numeric',
      });
    } catch {
      throw new RangeError(`${field}: unknown IANA time zone ${JSON.stringify(timeZone)} (expected e.g. 'Europe/Berlin')`);
    }
    formatters.set(timeZone, f);
  }
  return f;
}

/** Wall-clock fields of an instant in a zone (whole seconds; ms are the caller's). */
export interface WallClock {
  readonly year: number;
  /** 1..12 */
  readonly month: number;
  /** 1..31 */
  readonly day: number;
  /** 0..23 */
  readonly hour: number;
  readonly minute: number;
  readonly second: number;
}

/** The wall clock in `timeZone` at UTC epoch ms `ms` (years 1..9999). */
export function wallClock(ms: number, timeZone: string): WallClock {
  const parts = wallClockFormatter(timeZone).formatToParts(ms);
  const get = (type: Intl.DateTimeFormatPartTypes): number => Number(parts.find((p) => p.type === type)?.value);
  return { year: get('year'), month: get('month'), day: get('day'), hour: get('hour'), minute: get('minute'), second: get('second') };
}

/** Offset of `timeZone` from UTC at epoch ms `ms`, in minutes east of UTC (Berlin summer: 120; New York winter: −300). */
export function zoneOffset(ms: number, timeZone: string): number {
  const w = wallClock(ms, timeZone);
  const d = new Date(0);
  d.setUTCFullYear(w.year, w.month - 1, w.day); // not Date.UTC: it maps years 0..99 to 1900..1999
  d.setUTCHours(w.hour, w.minute, w.second, 0);
  const asUtc = d.getTime();
  return (asUtc - Math.floor(ms / 1000) * 1000) / 60_000;
}
