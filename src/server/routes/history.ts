import { Router } from 'express';
import { hourlyRows } from '../../outputs/hourlyCsv.ts';
import { localHours } from '../../outputs/localHours.ts';
import { parseTimeBound } from '../../outputs/parseTimeBound.ts';
import type { ServerContext } from '../context.ts';
import { HttpError } from '../HttpError.ts';
import { queryBound, queryId } from '../requestFields.ts';

/** Longest range of one request, hours (400 days). */
export const MAX_RANGE_HOURS = 24 * 400;

/**
 * `GET /api/history?from=&to=[&camera=][&zone=]` (view access): the hourly rows of the range in
 * the site's time zone, exactly the rows of the hourly CSV (src/outputs/hourlyCsv.ts) as JSON.
 * `from`/`to` are local dates (both inclusive) or ISO 8601 times; `start`/`end` in the answer are
 * the range as UTC epoch ms (end exclusive), `end` cut at the end of the current hour: hours that
 * have not begun have no row and no place on the chart. Hours before a zone existed, without data,
 * have no row.
 */
export function historyRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/history', ctx.auth.view, (req, res) => {
    const from = queryBound(req, 'from');
    const to = queryBound(req, 'to');
    const camera = queryId(req, 'camera');
    const zone = queryId(req, 'zone');
    let rows;
    let start: number;
    let end: number;
    try {
      start = parseTimeBound(from, { name: 'from', timeZone: ctx.timeZone });
      end = parseTimeBound(to, { name: 'to', timeZone: ctx.timeZone });
      const now = Date.now();
      rows = hourlyRows(ctx.store, { from, to, now, timeZone: ctx.timeZone, maxHours: MAX_RANGE_HOURS, ...(camera && { camera }), ...(zone && { zone }) });
      const begun = localHours({ from: start, to: end }, { timeZone: ctx.timeZone, maxHours: MAX_RANGE_HOURS }).filter((h) => h.start <= now);
      end = begun.length > 0 ? begun[begun.length - 1].end : start;
    } catch (error) {
      throw new HttpError(400, (error as Error).message);
    }
    res.set('Cache-Control', 'no-store').json({ timeZone: ctx.timeZone, from, to, start, end, rows });
  });
  return router;
}
