import { Router } from 'express';
import { hourlyRows, writeHourlyCsv } from '../../outputs/hourlyCsv.ts';
import type { ServerContext } from '../context.ts';
import { HttpError } from '../HttpError.ts';
import { queryBound, queryId } from '../requestFields.ts';
import { MAX_RANGE_HOURS } from './history.ts';

/**
 * `GET /api/export/hourly.csv?from=&to=[&camera=][&zone=]` (view access): the hourly CSV, the same
 * bytes as `residuum export --from … --to …` on the same database.
 */
export function exportRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/export/hourly.csv', ctx.auth.view, (req, res) => {
    const from = queryBound(req, 'from');
    const to = queryBound(req, 'to');
    const camera = queryId(req, 'camera');
    const zone = queryId(req, 'zone');
    let rows;
    try {
      rows = hourlyRows(ctx.store, { from, to, timeZone: ctx.timeZone, maxHours: MAX_RANGE_HOURS, ...(camera && { camera }), ...(zone && { zone }) });
    } catch (error) {
      throw new HttpError(400, (error as Error).message);
    }
    const name = `residuum-hourly-${from}-${to}${camera ? `-${camera}` : ''}${zone ? `-${zone}` : ''}.csv`.replace(/[^A-Za-z0-9._+-]/g, '_');
    res.set('Cache-Control', 'no-store');
    res.type('text/csv; charset=utf-8');
    res.attachment(name);
    res.send(writeHourlyCsv(rows));
  });
  return router;
}
