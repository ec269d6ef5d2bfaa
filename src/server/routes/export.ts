import { Router } from 'express';
import { writeHourlyCsv } from '../../outputs/hourlyCsv.ts';
import type { ServerContext } from '../context.ts';
import { checkHourlyRange, prepend, writeChunk } from '../hourlyChunks.ts';
import { queryBound, queryId } from '../requestFields.ts';

/**
 * `GET /api/export/hourly.csv?from=&to=[&camera=][&zone=]` (view access): the hourly CSV, the same
 * bytes as `residuum export --from … --to …` on the same database. At most 400 days per request;
 * read a day at a time and streamed (see checkHourlyRange); long reads without a key are limited.
 */
export function exportRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/export/hourly.csv', ctx.auth.view, async (req, res) => {
    const from = queryBound(req, 'from');
    const to = queryBound(req, 'to');
    const camera = queryId(req, 'camera');
    const zone = queryId(req, 'zone');
    const range = checkHourlyRange(ctx.store, { from, to, timeZone: ctx.timeZone, ...(camera && { camera }), ...(zone && { zone }) });
    const release = ctx.heavyReads.enter(req, range.hours, ctx.auth.role(req) !== 'none');
    try {
      const chunks = range.chunks();
      // The first day before any byte is sent: an unknown camera or zone is still a 400.
      const first = await chunks.next();
      const name = `residuum-hourly-${from}-${to}${camera ? `-${camera}` : ''}${zone ? `-${zone}` : ''}.csv`.replace(/[^A-Za-z0-9._+-]/g, '_');
      res.set('Cache-Control', 'no-store');
      res.type('text/csv; charset=utf-8');
      res.attachment(name);
      let header = true;
      for await (const rows of prepend(first, chunks)) {
        if (res.destroyed) return;
        // The header once, then each week's rows.
        let text = writeHourlyCsv(rows);
        if (!header) text = text.slice(text.indexOf('\r\n') + 2);
        header = false;
        await writeChunk(res, text);
      }
      res.end();
    } finally {
      release();
    }
  });
  return router;
}
