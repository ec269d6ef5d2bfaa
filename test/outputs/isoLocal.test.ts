import fc from 'fast-check';
import { DateTime } from 'luxon';
import { describe, expect, it } from 'vitest';
import { isoLocal } from '../../src/outputs/isoLocal.ts';
import { zoneOffset } from '../../src/outputs/zoneOffset.ts';

// ISO 8601-1 extended format, calendar date, local time with seconds (optional fraction) and a
// UTC offset ±hh:mm (the RFC 3339 date-time profile).
const ISO_EXTENDED_WITH_OFFSET = /^\d{4}-(0[1-9]|1[0-2])-(0[1-9]|[12]\d|3[01])T([01]\d|2[0-3]):[0-5]\d:[0-5]\d(\.\d{3})?[+-]([01]\d|2[0-3]):[0-5]\d$/;

const ZONES = ['UTC', 'Europe/Berlin', 'America/New_York', 'Asia/Kolkata', 'Asia/Kathmandu', 'Australia/Lord_Howe', 'Pacific/Chatham', 'America/St_Johns'];
// 2000-01-01 .. 2040-01-01
const instant = fc.integer({ min: Date.UTC(2000, 0, 1), max: Date.UTC(2040, 0, 1) });

describe('isoLocal', () => {
  it('prints known instants with the zone offset, the repeated fall-back hour twice', () => {
    // check: IANA tz database via Intl/luxon — EU summer time ends 2026-10-25 01:00 UTC
    // (Directive 2000/84/EC: last Sunday of October, 01:00 GMT)
    expect(isoLocal(Date.UTC(2026, 9, 25, 0), { timeZone: 'Europe/Berlin' })).toBe('2026-10-25T02:00:00+02:00');
    expect(isoLocal(Date.UTC(2026, 9, 25, 1), { timeZone: 'Europe/Berlin' })).toBe('2026-10-25T02:00:00+01:00');
    expect(isoLocal(Date.UTC(2026, 2, 29, 1), { timeZone: 'Europe/Berlin' })).toBe('2026-03-29T03:00:00+02:00');
    expect(isoLocal(Date.UTC(2026, 2, 28, 18, 30), { timeZone: 'Asia/Kolkata' })).toBe('2026-03-29T00:00:00+05:30');
    expect(isoLocal(Date.UTC(2026, 0, 1, 0, 0, 0, 5))).toBe('2026-01-01T00:00:00.005+00:00');
    expect(isoLocal(Date.UTC(2026, 0, 1), { milliseconds: 'always' })).toBe('2026-01-01T00:00:00.000+00:00');
    expect(isoLocal(Date.UTC(2026, 0, 1, 5, 0, 0, 999), { timeZone: 'America/New_York', milliseconds: 'never' })).toBe('2026-01-01T00:00:00-05:00');
  });

  it('matches the ISO 8601 extended regex and round-trips through new Date(s)', () => {
    fc.assert(
      fc.property(instant, fc.constantFrom(...ZONES), (ms, timeZone) => {
        const s = isoLocal(ms, { timeZone });
        expect(s).toMatch(ISO_EXTENDED_WITH_OFFSET);
        expect(new Date(s).getTime()).toBe(ms);
      }),
      { numRuns: 500 },
    );
  });

  it('agrees with luxon (independent formatting of the IANA data)', () => {
    // check: IANA tz database via Intl/luxon — luxon DateTime.toISO with suppressMilliseconds
    fc.assert(
      fc.property(instant, fc.constantFrom(...ZONES), (ms, timeZone) => {
        // luxon writes Z for a zero offset; we always write +00:00
        const expected = DateTime.fromMillis(ms, { zone: timeZone }).toISO({ suppressMilliseconds: true })!.replace(/Z$/, '+00:00');
        expect(isoLocal(ms, { timeZone })).toBe(expected);
      }),
      { numRuns: 500 },
    );
  });

  it('zoneOffset agrees with Intl longOffset names (GMT±hh:mm)', () => {
    // check: IANA tz database via Intl — timeZoneName 'longOffset' is formatted by ICU, not by us
    fc.assert(
      fc.property(instant, fc.constantFrom(...ZONES), (ms, timeZone) => {
        const name = new Intl.DateTimeFormat('en-US', { timeZone, timeZoneName: 'longOffset' })
          .formatToParts(ms)
          .find((p) => p.type === 'timeZoneName')!.value;
        const m = /^GMT(?:([+-])(\d{2}):(\d{2}))?$/.exec(name)!;
        const minutes = m[1] === undefined ? 0 : (m[1] === '-' ? -1 : 1) * (Number(m[2]) * 60 + Number(m[3]));
        expect(zoneOffset(ms, timeZone)).toBe(minutes);
      }),
      { numRuns: 300 },
    );
  });

  it('refuses unknown zones and out-of-range instants by name', () => {
    expect(() => isoLocal(0, { timeZone: 'Nowhere/Land' })).toThrow(/^timeZone: unknown IANA time zone/);
    expect(() => isoLocal(0.5)).toThrow(/^ms:/);
  });
});
