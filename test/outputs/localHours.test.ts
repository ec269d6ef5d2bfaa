import { DateTime } from 'luxon';
import { describe, expect, it } from 'vitest';
import { isoLocal } from '../../src/outputs/isoLocal.ts';
import { localDayStart, localHours } from '../../src/outputs/localHours.ts';
import { parseTimeBound } from '../../src/outputs/parseTimeBound.ts';

/** Hour starts of a local day by luxon: start of day, then +1 h of real time until the next day. */
function luxonHours(date: string, zone: string): string[] {
  let dt = DateTime.fromISO(date, { zone }).startOf('day');
  const end = dt.plus({ days: 1 }).startOf('day');
  const out: string[] = [];
  while (dt < end) {
    out.push(dt.toISO({ suppressMilliseconds: true })!);
    dt = dt.plus({ hours: 1 });
  }
  return out;
}

function ourHours(date: string, timeZone: string): string[] {
  const from = parseTimeBound(date, { name: 'from', timeZone });
  const to = parseTimeBound(date, { name: 'to', timeZone });
  return localHours({ from, to }, { timeZone }).map((h) => isoLocal(h.start, { timeZone }));
}

describe('localHours', () => {
  // check: IANA tz database via Intl/luxon. Expected counts also follow the published rules:
  // EU summer time starts/ends on the last Sunday of March/October at 01:00 UTC (Directive
  // 2000/84/EC); US DST starts on the second Sunday of March and ends on the first Sunday of
  // November at 02:00 local (Energy Policy Act of 2005); India has no DST.
  const days: [string, string, number][] = [
    ['Europe/Berlin', '2026-03-29', 23],
    ['Europe/Berlin', '2026-10-25', 25],
    ['Europe/Berlin', '2026-07-01', 24],
    ['America/New_York', '2026-03-08', 23],
    ['America/New_York', '2026-11-01', 25],
    ['America/New_York', '2026-03-29', 24],
    ['Asia/Kolkata', '2026-03-29', 24],
    ['Asia/Kolkata', '2026-10-25', 24],
    ['Asia/Kathmandu', '2026-03-29', 24],
  ];
  for (const [zone, date, count] of days) {
    it(`${zone} ${date} has ${count} hours, matching luxon`, () => {
      const ours = ourHours(date, zone);
      expect(ours).toHaveLength(count);
      expect(ours).toEqual(luxonHours(date, zone));
    });
  }

  it('Berlin spring-forward skips 02:00; fall-back repeats 02:00 with +02:00 then +01:00', () => {
    expect(ourHours('2026-03-29', 'Europe/Berlin').slice(0, 4)).toEqual([
      '2026-03-29T00:00:00+01:00',
      '2026-03-29T01:00:00+01:00',
      '2026-03-29T03:00:00+02:00',
      '2026-03-29T04:00:00+02:00',
    ]);
    expect(ourHours('2026-10-25', 'Europe/Berlin').slice(1, 5)).toEqual([
      '2026-10-25T01:00:00+02:00',
      '2026-10-25T02:00:00+02:00',
      '2026-10-25T02:00:00+01:00',
      '2026-10-25T03:00:00+01:00',
    ]);
    expect(ourHours('2026-11-01', 'America/New_York').slice(1, 4)).toEqual([
      '2026-11-01T01:00:00-04:00',
      '2026-11-01T01:00:00-05:00',
      '2026-11-01T02:00:00-05:00',
    ]);
  });

  it('India hours start at :30 past a UTC hour, Nepal at :15, each an hour long', () => {
    const kolkata = localHours({ from: Date.UTC(2026, 2, 28, 18, 30), to: Date.UTC(2026, 2, 29, 18, 30) }, { timeZone: 'Asia/Kolkata' });
    expect(kolkata).toHaveLength(24);
    for (const h of kolkata) {
      expect(h.start % 3_600_000).toBe(30 * 60_000);
      expect(h.end - h.start).toBe(3_600_000);
      expect(h.offsetMinutes).toBe(330);
    }
    const kathmandu = localHours({ from: Date.UTC(2026, 2, 29), to: Date.UTC(2026, 2, 29, 5) }, { timeZone: 'Asia/Kathmandu' });
    for (const h of kathmandu) expect(h.start % 3_600_000).toBe(15 * 60_000);
  });

  it('a 30-minute DST shift (Lord Howe) gives one 30-minute hour', () => {
    // Lord Howe Island: +10:30 standard, +11:00 summer; summer time ends on the first Sunday of
    // April at 02:00 local (rule recalled from memory), cross-checked with luxon offsets below.
    const hours = localHours(
      { from: parseTimeBound('2026-04-05', { timeZone: 'Australia/Lord_Howe' }), to: parseTimeBound('2026-04-05', { name: 'to', timeZone: 'Australia/Lord_Howe' }) },
      { timeZone: 'Australia/Lord_Howe' },
    );
    const odd = hours.filter((h) => h.end - h.start !== 3_600_000);
    expect(odd.map((h) => [isoLocal(h.start, { timeZone: 'Australia/Lord_Howe' }), (h.end - h.start) / 60_000])).toEqual([
      ['2026-04-05T01:30:00+10:30', 30],
    ]);
    for (const h of hours) expect(h.offsetMinutes).toBe(DateTime.fromMillis(h.start, { zone: 'Australia/Lord_Howe' }).offset);
  });

  it('returns whole hours around a range that starts and ends mid-hour', () => {
    const hours = localHours({ from: Date.UTC(2026, 0, 1, 4, 40), to: Date.UTC(2026, 0, 1, 5, 35) }, { timeZone: 'Asia/Kolkata' });
    expect(hours.map((h) => isoLocal(h.start, { timeZone: 'Asia/Kolkata' }))).toEqual(['2026-01-01T10:00:00+05:30', '2026-01-01T11:00:00+05:30']);
    expect(localHours({ from: 5, to: 5 })).toEqual([]);
  });

  it('refuses offsets that are not a multiple of 15 minutes (historical local mean time)', () => {
    // Liberia kept −00:44:30 until 1972 (IANA tz database, Africa/Monrovia; recalled from memory).
    expect(() => localHours({ from: Date.UTC(1970, 0, 1), to: Date.UTC(1970, 0, 2) }, { timeZone: 'Africa/Monrovia' })).toThrow(
      /^timeZone: Africa\/Monrovia is -44\.5 min from UTC/,
    );
    expect(() => localHours({ from: 0, to: 3_600_000 * 100 }, { maxHours: 10 })).toThrow(/^range: more than 10 hours/);
  });
});

describe('localDayStart and parseTimeBound', () => {
  it('start of day agrees with luxon, also when midnight is skipped (São Paulo 2018-11-04)', () => {
    // check: IANA tz database via luxon startOf('day')
    const cases: [string, string][] = [
      ['2018-11-04', 'America/Sao_Paulo'],
      ['2026-03-29', 'Europe/Berlin'],
      ['2026-10-25', 'Europe/Berlin'],
      ['2026-03-29', 'Asia/Kolkata'],
      ['2026-03-29', 'Pacific/Kiritimati'],
      ['2026-03-29', 'Pacific/Pago_Pago'],
    ];
    for (const [date, zone] of cases) {
      const [year, month, day] = date.split('-').map(Number);
      expect(localDayStart({ year, month, day }, zone)).toBe(DateTime.fromISO(date, { zone }).startOf('day').toMillis());
    }
    expect(isoLocal(localDayStart({ year: 2018, month: 11, day: 4 }, 'America/Sao_Paulo'), { timeZone: 'America/Sao_Paulo' })).toBe('2018-11-04T01:00:00-02:00');
  });

  it('a `to` date is inclusive: the start of the next local day', () => {
    expect(parseTimeBound('2026-12-31', { name: 'to', timeZone: 'Europe/Berlin' })).toBe(Date.parse('2027-01-01T00:00:00+01:00'));
    expect(parseTimeBound('2026-12-31', { name: 'from', timeZone: 'Europe/Berlin' })).toBe(Date.parse('2026-12-31T00:00:00+01:00'));
  });

  it('timestamps with offset agree with Date.parse', () => {
    // check: ECMAScript Date.parse of the ISO format as an independent parser
    for (const s of ['2026-03-29T03:00:00+02:00', '2026-03-29T03:00Z', '2026-03-29T03:00:00.250-05:30', '1999-12-31T23:59:59Z']) {
      expect(parseTimeBound(s)).toBe(Date.parse(s));
    }
    expect(parseTimeBound(1234)).toBe(1234);
  });

  it('refuses malformed bounds with messages naming the parameter', () => {
    expect(() => parseTimeBound('yesterday', { name: 'from' })).toThrow(/^from: expected a date YYYY-MM-DD/);
    expect(() => parseTimeBound('2026-03-29T03:00:00', { name: 'to' })).toThrow(/^to: expected/);
    expect(() => parseTimeBound('2026-02-29', { name: 'to' })).toThrow(/^to: no such date 2026-02-29/);
    expect(parseTimeBound('2028-02-29')).toBe(Date.UTC(2028, 1, 29));
    expect(() => parseTimeBound('2026-03-29T24:00:00Z')).toThrow(/^from: no such time/);
    expect(() => parseTimeBound('2026-03-29', { timeZone: 'Atlantis/Capital' })).toThrow(/^timeZone: unknown IANA time zone/);
    expect(() => parseTimeBound(1.5, { name: 'to' })).toThrow(/^to:/);
  });
});
