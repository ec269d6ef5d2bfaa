import { parse } from 'csv-parse/sync';
import { DateTime } from 'luxon';
import { Writable } from 'node:stream';
import { afterEach, describe, expect, it } from 'vitest';
import { formatNumber, HOURLY_CSV_HEADER, hourlyRows, writeHourlyCsv, type HourlyRow } from '../../src/outputs/hourlyCsv.ts';
import type { Store } from '../../src/store/index.ts';
import { HALF, tempStore, type TempStore } from '../store/tempStore.ts';

const MIN = 60_000;
const HOUR = 3_600_000;

let t: TempStore | undefined;
afterEach(() => {
  t?.cleanup();
  t = undefined;
});

/** A store with camera `cam`, room zone `room` and shelf zone `shelf`, created long before 2026. */
function site(timeZone: string): Store {
  t = tempStore({ timeZone });
  t.store.upsertCamera({ id: 'cam', name: 'Lobby camera' }, { time: 0 });
  t.store.upsertZone('cam', { id: 'room', kind: 'room', polygon: HALF }, { time: 0 });
  t.store.upsertZone('cam', { id: 'shelf', kind: 'shelf', polygon: HALF }, { time: 0 });
  return t.store;
}

/** One sample covering [start, start + intervalMs). */
function put(store: Store, zone: 'room' | 'shelf', start: number, value: number, intervalMs = MIN): void {
  store.insertSample({ time: start + intervalMs, camera: 'cam', zone, value, kind: zone === 'room' ? 'count' : 'fill', intervalMs });
}

function csvRecords(text: string): string[][] {
  // check: RFC 4180; csv-parse as independent parser
  return parse(text, { record_delimiter: '\r\n' }) as string[][];
}

function byZone(rows: HourlyRow[], zone: string): HourlyRow[] {
  return rows.filter((r) => r.zone === zone);
}

/** Hour starts of a local day by luxon (start of day, +1 h of real time until the next day). */
function luxonHourStarts(date: string, zone: string): DateTime[] {
  let dt = DateTime.fromISO(date, { zone }).startOf('day');
  const end = dt.plus({ days: 1 }).startOf('day');
  const out: DateTime[] = [];
  while (dt < end) {
    out.push(dt);
    dt = dt.plus({ hours: 1 });
  }
  return out;
}

describe('hourlyRows across DST and half-hour zones', () => {
  // check: IANA tz database via Intl/luxon
  const days: [string, string, number][] = [
    ['Europe/Berlin', '2026-03-29', 23],
    ['Europe/Berlin', '2026-10-25', 25],
    ['America/New_York', '2026-03-08', 23],
    ['America/New_York', '2026-11-01', 25],
    ['Asia/Kolkata', '2026-03-29', 24],
  ];
  for (const [zone, date, count] of days) {
    it(`${zone} ${date}: ${count} rows per zone with luxon's hour starts, every one without data`, () => {
      const store = site('UTC'); // the zone comes from the option, not the store default
      const rows = hourlyRows(store, { from: date, to: date, timeZone: zone });
      const room = byZone(rows, 'room');
      expect(room).toHaveLength(count);
      expect(byZone(rows, 'shelf')).toHaveLength(count);
      expect(room.map((r) => r.hourStartIso)).toEqual(luxonHourStarts(date, zone).map((d) => d.toISO({ suppressMilliseconds: true })));
      for (const r of room) {
        expect(r).toMatchObject({ coverage: 0, samples: 0, mean: null, max: null, min: null, occupiedShare: null });
      }
    });
  }

  it('Berlin fall-back: samples at 02:30+02:00 and 02:30+01:00 land in the two different 02:00 rows', () => {
    const store = site('Europe/Berlin');
    put(store, 'room', Date.parse('2026-10-25T02:30:00+02:00'), 1);
    put(store, 'room', Date.parse('2026-10-25T02:30:00+01:00'), 3);
    const room = byZone(hourlyRows(store, { from: '2026-10-25', to: '2026-10-25' }), 'room');
    const summer = room.find((r) => r.hourStartIso === '2026-10-25T02:00:00+02:00')!;
    const winter = room.find((r) => r.hourStartIso === '2026-10-25T02:00:00+01:00')!;
    expect(summer).toMatchObject({ samples: 1, mean: 1, coveredMs: MIN });
    expect(winter).toMatchObject({ samples: 1, mean: 3, coveredMs: MIN });
    expect(room.filter((r) => r.samples > 0)).toHaveLength(2);
  });

  it('Berlin, New York: a sample at a known instant lands in the local hour luxon puts it in', () => {
    for (const [zone, date] of [
      ['Europe/Berlin', '2026-03-29'],
      ['Europe/Berlin', '2026-10-25'],
      ['America/New_York', '2026-11-01'],
    ]) {
      const starts = luxonHourStarts(date, zone);
      const store = site(zone);
      // One minute-long sample 17 minutes into every fifth hour of luxon's list.
      const chosen = starts.filter((_, i) => i % 5 === 2);
      for (const s of chosen) put(store, 'room', s.toMillis() + 17 * MIN, 2);
      const room = byZone(hourlyRows(store, { from: date, to: date }), 'room');
      const hit = room.filter((r) => r.samples > 0).map((r) => r.hourStartIso);
      expect(hit).toEqual(chosen.map((s) => s.toISO({ suppressMilliseconds: true })));
      t!.cleanup();
      t = undefined;
    }
  });

  it('Asia/Kolkata: local hours start at :30 UTC; a sample straddling 04:30Z is split between two rows', () => {
    const store = site('Asia/Kolkata');
    // 04:40Z = 10:10+05:30
    put(store, 'room', Date.UTC(2026, 2, 29, 4, 40), 4);
    // covers [04:29Z, 04:31Z): one minute in 09:00+05:30, one in 10:00+05:30
    put(store, 'shelf', Date.UTC(2026, 2, 29, 4, 29), 0.5, 2 * MIN);
    const rows = hourlyRows(store, { from: '2026-03-29', to: '2026-03-29' });
    const room = byZone(rows, 'room');
    expect(room).toHaveLength(24);
    expect(room[0].hourStartIso).toBe('2026-03-29T00:00:00+05:30');
    expect(room[0].hourStart).toBe(Date.UTC(2026, 2, 28, 18, 30));
    expect(room.filter((r) => r.samples > 0).map((r) => [r.hourStartIso, r.mean])).toEqual([['2026-03-29T10:00:00+05:30', 4]]);
    const shelf = byZone(rows, 'shelf').filter((r) => r.coveredMs > 0);
    expect(shelf.map((r) => [r.hourStartIso, r.coveredMs, r.samples, r.mean])).toEqual([
      ['2026-03-29T09:00:00+05:30', MIN, 0, 0.5],
      ['2026-03-29T10:00:00+05:30', MIN, 1, 0.5],
    ]);
    const csv = csvRecords(writeHourlyCsv(rows));
    expect(csv.find((r) => r[0] === '2026-03-29T09:00:00+05:30' && r[2] === 'shelf')).toEqual(['2026-03-29T09:00:00+05:30', 'cam', 'shelf', '0.5', '0.5', '0.5', '0.5', '0.017', '0']);
  });
});

describe('hourlyRows values', () => {
  it('time-weighted mean, min, max, occupied share and coverage (hand-computed)', () => {
    const store = site('UTC');
    const h = Date.UTC(2026, 5, 1, 9); // 09:00Z
    // Room: 0 people for 10 min, 3 for 20 min, 2 for 10 min, then 20 min without data.
    put(store, 'room', h, 0, 10 * MIN);
    put(store, 'room', h + 10 * MIN, 3, 20 * MIN);
    put(store, 'room', h + 30 * MIN, 2, 10 * MIN);
    // Shelf: 0.25 full for 15 min, 0.75 for 45 min.
    put(store, 'shelf', h, 0.25, 15 * MIN);
    put(store, 'shelf', h + 15 * MIN, 0.75, 45 * MIN);
    const rows = hourlyRows(store, { from: '2026-06-01T09:00:00Z', to: '2026-06-01T11:00:00Z' });
    expect(rows.map((r) => [r.hourStartIso, r.zone])).toEqual([
      ['2026-06-01T09:00:00+00:00', 'room'],
      ['2026-06-01T09:00:00+00:00', 'shelf'],
      ['2026-06-01T10:00:00+00:00', 'room'],
      ['2026-06-01T10:00:00+00:00', 'shelf'],
    ]);
    // mean = (0·10 + 3·20 + 2·10) / 40 = 2; occupied 30 of 40 min; coverage 40/60.
    expect(rows[0]).toMatchObject({ samples: 3, mean: 2, min: 0, max: 3, occupiedShare: 0.75, coverage: 40 / 60, kind: 'count' });
    // mean fill = (0.25·15 + 0.75·45) / 60 = 0.625; for shelves occupied_share is the mean fill.
    expect(rows[1]).toMatchObject({ samples: 2, mean: 0.625, min: 0.25, max: 0.75, occupiedShare: 0.625, coverage: 1, kind: 'fill' });
    // 10:00: a gap, not zero occupancy.
    expect(rows[2]).toMatchObject({ samples: 0, coverage: 0, mean: null, occupiedShare: null });
    const csv = csvRecords(writeHourlyCsv(rows));
    expect(csv).toEqual([
      [...HOURLY_CSV_HEADER],
      ['2026-06-01T09:00:00+00:00', 'cam', 'room', '2', '3', '0', '0.75', '0.667', '3'],
      ['2026-06-01T09:00:00+00:00', 'cam', 'shelf', '0.625', '0.75', '0.25', '0.625', '1', '2'],
      ['2026-06-01T10:00:00+00:00', 'cam', 'room', '', '', '', '', '0', '0'],
      ['2026-06-01T10:00:00+00:00', 'cam', 'shelf', '', '', '', '', '0', '0'],
    ]);
  });

  it('a zone appears from the hour it was created until the hour it was removed; filters by camera and zone', () => {
    const store = site('UTC');
    const day = Date.UTC(2026, 5, 1);
    store.upsertZone('cam', { id: 'new', kind: 'room', polygon: HALF }, { time: day + 5 * HOUR + 20 * MIN });
    store.removeZone('cam', 'new', { time: day + 8 * HOUR });
    const rows = hourlyRows(store, { from: '2026-06-01', to: '2026-06-01', zone: 'new' });
    expect(rows.map((r) => new Date(r.hourStart).getUTCHours())).toEqual([5, 6, 7]);
    expect(hourlyRows(store, { from: '2026-06-01', to: '2026-06-01', camera: 'cam' })).toHaveLength(24 * 2 + 3);
    expect(() => hourlyRows(store, { from: '2026-06-01', to: '2026-06-01', camera: 'other' })).toThrow(/^camera: no camera "other"/);
    expect(() => hourlyRows(store, { from: '2026-06-01', to: '2026-06-01', zone: 'other' })).toThrow(/^zone: no zone "other"/);
  });

  it('rollups kept after pruning still export', () => {
    const store = site('UTC');
    put(store, 'room', Date.UTC(2026, 0, 1, 10), 5);
    store.pruneSamples(Date.UTC(2026, 1, 1));
    expect(store.listSamples({ camera: 'cam', zone: 'room' })).toEqual([]);
    const row = hourlyRows(store, { from: '2026-01-01', to: '2026-01-01', zone: 'room' })[10];
    expect(row).toMatchObject({ hourStartIso: '2026-01-01T10:00:00+00:00', samples: 1, mean: 5 });
  });

  it('validates from, to and timeZone with messages naming them', () => {
    const store = site('UTC');
    expect(() => hourlyRows(store, { from: 'last week', to: '2026-01-01' })).toThrow(/^from: expected a date YYYY-MM-DD/);
    expect(() => hourlyRows(store, { from: '2026-01-02', to: '2026-01-01' })).toThrow(/^to: "2026-01-01" is not after from/);
    expect(() => hourlyRows(store, { from: '2026-01-01', to: '2026-13-01' })).toThrow(/^to: no such date/);
    expect(() => hourlyRows(store, { from: '2026-01-01', to: '2026-01-01', timeZone: 'Berlin' })).toThrow(/^timeZone: unknown IANA/);
    expect(() => hourlyRows(store, { to: '2026-01-01' } as never)).toThrow(/^from: required/);
  });
});

describe('writeHourlyCsv', () => {
  it('quotes and formula-guards camera and zone names; the file parses back (RFC 4180)', () => {
    const store = site('Europe/Berlin');
    store.upsertCamera({ id: 'cam', name: '=HYPERLINK("http://example.invalid","x")' });
    store.upsertZone('cam', { id: 'room', name: 'Hall, "east"\r\nwing', kind: 'room', polygon: HALF }, { time: 0 });
    store.upsertZone('cam', { id: '-lobby', name: '@lobby', kind: 'room', polygon: HALF }, { time: 0 });
    put(store, 'room', Date.parse('2026-03-29T03:10:00+02:00'), 2);
    const rows = hourlyRows(store, { from: '2026-03-29', to: '2026-03-29' });
    const byName = writeHourlyCsv(rows, { label: 'name' });
    const byId = writeHourlyCsv(rows);
    expect(byName.startsWith('hour_start,camera,zone,mean,max,min,occupied_share,coverage,samples\r\n')).toBe(true);
    // Every record ends with CRLF; no bare LF outside the quoted name.
    expect(byId.split('\r\n').slice(0, -1).every((line) => !line.includes('\n'))).toBe(true);
    expect(byId.endsWith('\r\n')).toBe(true);

    const named = csvRecords(byName);
    expect(named).toHaveLength(1 + 23 * 3);
    expect(named.every((r) => r.length === 9)).toBe(true);
    // check: OWASP CSV injection guidance — leading = and @ get a ' prefix
    const hall = named.find((r) => r[2] === 'Hall, "east"\r\nwing' && r[0] === '2026-03-29T03:00:00+02:00')!;
    expect(hall).toEqual(['2026-03-29T03:00:00+02:00', '\'=HYPERLINK("http://example.invalid","x")', 'Hall, "east"\r\nwing', '2', '2', '2', '1', '0.017', '1']);
    expect(named.some((r) => r[2] === "'@lobby")).toBe(true);
    expect(csvRecords(byId).some((r) => r[2] === "'-lobby")).toBe(true);
    for (const r of named.slice(1)) {
      for (const n of r.slice(3)) expect(n).toMatch(/^(\d+(\.\d{1,3})?)?$/);
    }
  });

  it('writes the same bytes to a stream, waiting for drain; optional BOM', async () => {
    const store = site('Asia/Kolkata');
    put(store, 'room', Date.UTC(2026, 2, 29, 4, 40), 4);
    const rows = hourlyRows(store, { from: '2026-03-29', to: '2026-03-30' });
    const chunks: Buffer[] = [];
    let waits = 0;
    const out = new Writable({
      highWaterMark: 64,
      write(chunk: Buffer, _enc, done) {
        chunks.push(chunk);
        waits++;
        setImmediate(done);
      },
    });
    await writeHourlyCsv(rows, { out, bom: true });
    const text = Buffer.concat(chunks).toString('utf8');
    expect(text).toBe(`\uFEFF${writeHourlyCsv(rows)}`);
    expect(waits).toBe(1 + rows.length);
    expect(parse(text, { bom: true, record_delimiter: '\r\n' })[0]).toEqual([...HOURLY_CSV_HEADER]);
  });

  it('formats numbers fixed with up to 3 decimals and a dot', () => {
    expect([2 / 3, 0.5, 2, 0, 1234.5678, 0.0004, 1e-9, 999.9996].map(formatNumber)).toEqual(['0.667', '0.5', '2', '0', '1234.568', '0', '0', '1000']);
    expect(formatNumber(null)).toBe('');
  });
});

describe('hourlyRows stops at the current hour', () => {
  it('gives no row for hours that have not begun, and the hour in progress with its data so far', () => {
    const store = site('Europe/Berlin');
    // 10:30 local on the fall-back day (25 hours); the hour 10:00–11:00 is under way.
    const now = DateTime.fromISO('2026-10-25T10:30', { zone: 'Europe/Berlin' }).toMillis();
    put(store, 'room', now - 20 * MIN, 2);
    const rows = byZone(hourlyRows(store, { from: '2026-10-25', to: '2026-10-25', now }), 'room');
    // check: luxon's hour starts of the day (IANA tz database), cut after the hour containing `now`:
    // midnight to 10:00 with the repeated 02:00 is 12 hours.
    const expected = luxonHourStarts('2026-10-25', 'Europe/Berlin').filter((d) => d.toMillis() <= now);
    expect(expected).toHaveLength(12);
    expect(rows.map((r) => r.hourStartIso)).toEqual(expected.map((d) => d.toISO({ suppressMilliseconds: true })));
    const last = rows[rows.length - 1];
    expect(last.hourStartIso).toBe('2026-10-25T10:00:00+01:00');
    expect(last.mean).toBe(2);
    // The hour's coverage is of the whole hour: a minute of data in an hour is 1/60, future minutes count as not covered.
    expect(last.coverage).toBeCloseTo(1 / 60, 9);
    // A range wholly after `now` has no rows; the CSV is its header only.
    expect(hourlyRows(store, { from: '2026-10-26', to: '2026-10-26', now })).toEqual([]);
    expect(writeHourlyCsv(hourlyRows(store, { from: '2026-10-26', to: '2026-10-26', now }))).toBe(`${HOURLY_CSV_HEADER.join(',')}\r\n`);
  });
});
