import { once } from 'node:events';
import type { Writable } from 'node:stream';
import { BUCKET_MS, SAMPLE_KIND_OF_ZONE, VALUE_SCALE, type SampleKind, type Store } from '../store/index.ts';
import { csvField, csvLine } from './csvField.ts';
import { isoLocal } from './isoLocal.ts';
import { localHours } from './localHours.ts';
import { parseTimeBound } from './parseTimeBound.ts';
import { wallClockFormatter } from './zoneOffset.ts';

/**
 * Hourly CSV export: one row per local hour of the site's IANA zone and per known zone, built
 * from the store's quarter-hour UTC rollups (see src/store/rollups.ts for why quarter hours).
 *
 * Every local hour in the range that has begun gets a row for every zone that existed during it,
 * data or not (hours after the current one have none: a day still going stops at the current hour,
 * so the future never reads as a gap); an hour without samples has `coverage` 0, `samples` 0 and empty `mean`, `max`, `min` and
 * `occupied_share`, so a gap never reads as zero occupancy. A DST day has 23 or 25 rows per zone;
 * the repeated fall-back hour appears twice with different offsets in `hour_start`.
 *
 * Columns:
 * - `hour_start`: ISO 8601 local time with UTC offset, e.g. `2026-03-29T03:00:00+02:00`;
 * - `camera`, `zone`: ids (or names, option `label`), formula-guarded and RFC 4180-quoted;
 * - `mean`: time-weighted mean over the covered time of the hour (people, or fill 0..1);
 * - `max`, `min`: over the samples whose interval overlaps the hour;
 * - `occupied_share`: rooms: share of covered time with a count > 0; shelves: the mean fill;
 * - `coverage`: covered share of the hour, 0..1 (an hour is 30 min long only around a
 *   30-minute DST shift);
 * - `samples`: samples whose interval ends in the hour.
 * Numbers are fixed-point with up to 3 decimals and `.` as separator, trailing zeros dropped.
 */

export const HOURLY_CSV_HEADER = ['hour_start', 'camera', 'zone', 'mean', 'max', 'min', 'occupied_share', 'coverage', 'samples'] as const;

/** What the export reads from a store. */
export type HourlySource = Pick<Store, 'timeZone' | 'listCameras' | 'listZones' | 'listRollups'>;

export interface HourlyRowsOptions {
  /** Start: a local date `YYYY-MM-DD` (start of that day), an ISO 8601 timestamp with offset, or epoch ms; inclusive. */
  readonly from: string | number;
  /** End: a local date (inclusive: through the end of that day), an ISO timestamp or epoch ms (exclusive). */
  readonly to: string | number;
  /** Only this camera; default all. */
  readonly camera?: string;
  /** Only zones with this id; default all. */
  readonly zone?: string;
  /** IANA zone of the local hours and dates; default the store's site zone. */
  readonly timeZone?: string;
  /** Most hours in the range before refusing; default 24 × 366 × 10. */
  readonly maxHours?: number;
  /** The present, UTC epoch ms: hours starting after it get no row; default `Date.now()`. */
  readonly now?: number;
}

export interface HourlyRow {
  /** First instant of the local hour, UTC epoch ms (inclusive). */
  readonly hourStart: number;
  /** End of the local hour, UTC epoch ms (exclusive). */
  readonly hourEnd: number;
  /** UTC offset during the hour, minutes east. */
  readonly offsetMinutes: number;
  /** `hourStart` as ISO 8601 local time with offset. */
  readonly hourStartIso: string;
  readonly camera: string;
  readonly cameraName: string;
  readonly zone: string;
  readonly zoneName: string;
  readonly kind: SampleKind;
  readonly samples: number;
  /** Milliseconds of the hour covered by samples. */
  readonly coveredMs: number;
  /** coveredMs / (hourEnd − hourStart), 0..1. */
  readonly coverage: number;
  /** Time-weighted mean over covered time; null without data. */
  readonly mean: number | null;
  readonly max: number | null;
  readonly min: number | null;
  /** Rooms: occupied share of covered time; shelves: mean fill; null without data. */
  readonly occupiedShare: number | null;
  /** Milliseconds covered by samples with a quality flag set. */
  readonly flaggedMs: number;
}

/**
 * The hourly rows for a range, ordered by hour, then camera, then zone id.
 *
 * ```ts
 * hourlyRows(store, { from: '2026-10-25', to: '2026-10-25', timeZone: 'Europe/Berlin' }) // 25 rows per zone
 * ```
 */
export function hourlyRows(store: HourlySource, options: HourlyRowsOptions): HourlyRow[] {
  if (typeof options !== 'object' || options === null) throw new TypeError('options: expected { from, to, … }');
  const { from, to, camera, zone, timeZone = store.timeZone, maxHours, now = Date.now() } = options;
  wallClockFormatter(timeZone, 'timeZone');
  if (from === undefined) throw new TypeError('from: required (a date YYYY-MM-DD or an ISO 8601 timestamp)');
  if (to === undefined) throw new TypeError('to: required (a date YYYY-MM-DD or an ISO 8601 timestamp)');
  const start = parseTimeBound(from, { name: 'from', timeZone });
  const end = parseTimeBound(to, { name: 'to', timeZone });
  if (end <= start) throw new RangeError(`to: ${JSON.stringify(to)} is not after from ${JSON.stringify(from)}`);

  const cameras = store.listCameras();
  if (camera !== undefined && !cameras.some((c) => c.id === camera)) {
    throw new RangeError(`camera: no camera ${JSON.stringify(camera)} in the store`);
  }
  const zones = store
    .listZones({ camera, includeRemoved: true })
    .filter((z) => zone === undefined || z.zone.id === zone);
  if (zone !== undefined && zones.length === 0) {
    throw new RangeError(`zone: no zone ${JSON.stringify(zone)}${camera === undefined ? '' : ` on camera ${JSON.stringify(camera)}`} in the store`);
  }
  const cameraNames = new Map(cameras.map((c) => [c.id, c.name]));

  const hours = localHours({ from: start, to: end }, { timeZone, maxHours }).filter((h) => h.start <= now);
  const nh = hours.length;
  const nz = zones.length;
  if (nh === 0 || nz === 0) return [];
  const hourOf = new Map<number, number>();
  hours.forEach((h, i) => {
    for (let b = h.start; b < h.end; b += BUCKET_MS) hourOf.set(b, i);
  });
  const zoneIndex = new Map(zones.map((z, i) => [`${z.camera}\u0000${z.zone.id}`, i]));

  const size = nz * nh;
  const samples = new Float64Array(size);
  const weighted = new Float64Array(size);
  const occupied = new Float64Array(size);
  const flagged = new Float64Array(size);
  const covered = new Float64Array(size);
  const min = new Float64Array(size).fill(Infinity);
  const max = new Float64Array(size).fill(-Infinity);
  const rollups = store.listRollups({ from: hours[0].start, to: hours[nh - 1].end, camera, zone });
  for (const r of rollups) {
    const zi = zoneIndex.get(`${r.camera}\u0000${r.zone}`);
    const hi = hourOf.get(r.bucketStart);
    if (zi === undefined || hi === undefined) continue;
    const k = zi * nh + hi;
    samples[k] += r.samples;
    weighted[k] += r.weightedSum;
    occupied[k] += r.occupiedMs;
    flagged[k] += r.flaggedMs;
    covered[k] += r.coveredMs;
    if (r.min < min[k]) min[k] = r.min;
    if (r.max > max[k]) max[k] = r.max;
  }

  const rows: HourlyRow[] = [];
  hours.forEach((h, hi) => {
    const hourStartIso = isoLocal(h.start, { timeZone });
    zones.forEach((z, zi) => {
      const k = zi * nh + hi;
      const hasData = covered[k] > 0;
      const alive = h.end > z.created && (z.removed === null || h.start < z.removed);
      if (!hasData && !alive) return;
      const kind = SAMPLE_KIND_OF_ZONE[z.zone.kind];
      const mean = hasData ? weighted[k] / VALUE_SCALE / covered[k] : null;
      rows.push({
        hourStart: h.start,
        hourEnd: h.end,
        offsetMinutes: h.offsetMinutes,
        hourStartIso,
        camera: z.camera,
        cameraName: cameraNames.get(z.camera) ?? z.camera,
        zone: z.zone.id,
        zoneName: z.zone.name ?? z.zone.id,
        kind,
        samples: samples[k],
        coveredMs: covered[k],
        coverage: covered[k] / (h.end - h.start),
        mean,
        max: hasData ? max[k] : null,
        min: hasData ? min[k] : null,
        occupiedShare: hasData ? (kind === 'count' ? occupied[k] / covered[k] : mean) : null,
        flaggedMs: flagged[k],
      });
    });
  });
  return rows;
}

/** Fixed-point, up to 3 decimals, `.` separator, trailing zeros dropped; null → empty. `formatNumber(2/3)` → `0.667`. */
export function formatNumber(value: number | null): string {
  if (value === null) return '';
  if (!Number.isFinite(value)) throw new RangeError(`value: expected a finite number, got ${value}`);
  const fixed = value.toFixed(3).replace(/(\.\d*?)0+$/, '$1').replace(/\.$/, '');
  return fixed === '-0' ? '0' : fixed;
}

export interface HourlyCsvOptions {
  /** Print camera and zone `id`s or their human `name`s; default `id`. */
  readonly label?: 'id' | 'name';
  /** Start with a UTF-8 byte order mark (helps some spreadsheets detect UTF-8); default false. */
  readonly bom?: boolean;
}

function* csvLines(rows: Iterable<HourlyRow>, label: 'id' | 'name', bom: boolean): Generator<string> {
  yield (bom ? '\uFEFF' : '') + csvLine(HOURLY_CSV_HEADER.map((h) => csvField(h)));
  for (const r of rows) {
    yield csvLine([
      csvField(r.hourStartIso),
      csvField(label === 'name' ? r.cameraName : r.camera),
      csvField(label === 'name' ? r.zoneName : r.zone),
      formatNumber(r.mean),
      formatNumber(r.max),
      formatNumber(r.min),
      formatNumber(r.occupiedShare),
      formatNumber(r.coverage),
      String(r.samples),
    ]);
  }
}

/**
 * Writes rows as RFC 4180 CSV (UTF-8, CRLF, header {@link HOURLY_CSV_HEADER}). Without `out`
 * returns the text; with `out` writes line by line, waiting for `drain` when the stream asks, and
 * resolves when all is written (it does not end `out`).
 */
export function writeHourlyCsv(rows: Iterable<HourlyRow>, options?: HourlyCsvOptions & { out?: undefined }): string;
export function writeHourlyCsv(rows: Iterable<HourlyRow>, options: HourlyCsvOptions & { out: Writable }): Promise<void>;
export function writeHourlyCsv(rows: Iterable<HourlyRow>, options: HourlyCsvOptions & { out?: Writable } = {}): string | Promise<void> {
  const { label = 'id', bom = false, out } = options;
  if (label !== 'id' && label !== 'name') throw new RangeError(`options.label: expected 'id' or 'name', got ${JSON.stringify(label)}`);
  const lines = csvLines(rows, label, bom);
  if (out === undefined) return Array.from(lines).join('');
  return (async () => {
    for (const line of lines) {
      if (!out.write(line, 'utf8')) await once(out, 'drain');
    }
  })();
}
