import { Router } from 'express';
import { localDayStart } from '../../outputs/localHours.ts';
import { BUCKET_MS } from '../../store/index.ts';
import type { ServerContext } from '../context.ts';

/** Longest sample interval the store accepts, ms (src/store/samples.ts). */
const MAX_INTERVAL_MS = 3_600_000;

export interface ZoneToday {
  readonly camera: string;
  readonly zone: string;
  /** Highest stored sample today (people, or fill 0..1), or null without samples. */
  readonly peak: number | null;
  /** End of the sample interval that had the peak, UTC epoch ms (the first such sample). */
  readonly peakAt: number | null;
  /** Lowest stored sample today, or null. */
  readonly low: number | null;
  readonly lowAt: number | null;
}

/**
 * `GET /api/today` (view): per camera and zone the highest and lowest stored sample since local
 * midnight of the site's time zone, and when: `{ timeZone, from, zones: [ZoneToday] }`. A sample
 * is the mean of the smoothed count over its interval (`sampleSeconds`), so the peak is the
 * busiest such interval, the same figure as the hourly peak of History and the CSV's `max`.
 * The quarter-hour rollups find the bucket of the extreme; only that bucket's samples are read.
 */
export function todayRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/today', ctx.auth.view, (_req, res) => {
    const now = Date.now();
    const from = localDayStart(localDateParts(now, ctx.timeZone), ctx.timeZone);
    const zones: ZoneToday[] = [];
    const buckets = new Map<string, { max: { v: number; b: number }; min: { v: number; b: number } }>();
    for (const r of ctx.store.listRollups({ from, to: now + 1 })) {
      if (r.samples === 0) continue;
      const key = `${r.camera}\u0000${r.zone}`;
      const seen = buckets.get(key);
      if (!seen) buckets.set(key, { max: { v: r.max, b: r.bucketStart }, min: { v: r.min, b: r.bucketStart } });
      else {
        if (r.max > seen.max.v) seen.max = { v: r.max, b: r.bucketStart };
        if (r.min < seen.min.v) seen.min = { v: r.min, b: r.bucketStart };
      }
    }
    for (const z of ctx.store.listZones()) {
      const found = buckets.get(`${z.camera}\u0000${z.zone.id}`);
      if (!found) {
        zones.push({ camera: z.camera, zone: z.zone.id, peak: null, peakAt: null, low: null, lowAt: null });
        continue;
      }
      // The sample with the extreme among those whose interval overlaps the bucket (the first one on ties).
      const at = (bucket: number, sign: 1 | -1): number | null => {
        const end = bucket + BUCKET_MS;
        const samples = ctx.store.listSamples({ camera: z.camera, zone: z.zone.id, from: Math.max(from, bucket), to: end + MAX_INTERVAL_MS });
        let best: { v: number; t: number } | undefined;
        for (const s of samples) {
          if (s.time - s.intervalMs >= end) continue;
          if (!best || sign * (s.value - best.v) > 0) best = { v: s.value, t: s.time };
        }
        return best?.t ?? null;
      };
      zones.push({ camera: z.camera, zone: z.zone.id, peak: found.max.v, peakAt: at(found.max.b, 1), low: found.min.v, lowAt: at(found.min.b, -1) });
    }
    res.set('Cache-Control', 'no-store').json({ timeZone: ctx.timeZone, from, zones });
  });
  return router;
}

/** The local calendar date of `time` in `timeZone`. */
function localDateParts(time: number, timeZone: string): { year: number; month: number; day: number } {
  const [year, month, day] = new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).format(time).split('-').map(Number);
  return { year, month, day };
}
