import { Router } from 'express';
import type { ServerContext } from '../context.ts';
import { checkHourlyRange, prepend, writeChunk } from '../hourlyChunks.ts';
import { queryBound, queryId } from '../requestFields.ts';

export { MAX_RANGE_DAYS } from '../hourlyChunks.ts';

/**
 * `GET /api/history?from=&to=[&camera=][&zone=]` (view access): the hourly rows of the range in
 * the site's time zone, exactly the rows of the hourly CSV (src/outputs/hourlyCsv.ts) as JSON.
 * `from`/`to` are local dates (both inclusive) or ISO 8601 times; `start`/`end` in the answer are
 * the range as UTC epoch ms (end exclusive), `end` cut at the end of the current hour: hours that
 * have not begun have no row and no place on the chart. Hours before a zone existed, without data,
 * have no row. At most 400 days per request; the rows are read a day at a time and the JSON
 * written as they come (see checkHourlyRange), long reads without a key are limited (see heavyReadGate).
 */
export function historyRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/history', ctx.auth.view, async (req, res) => {
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
      res.set('Cache-Control', 'no-store').type('application/json');
      res.write(`${JSON.stringify({ timeZone: ctx.timeZone, from, to, start: range.start, end: range.end }).slice(0, -1)},"rows":[`);
      let empty = true;
      for await (const rows of prepend(first, chunks)) {
        if (res.destroyed) return;
        if (rows.length === 0) continue;
        const text = rows.map((r) => JSON.stringify(r)).join(',');
        await writeChunk(res, empty ? text : `,${text}`);
        empty = false;
      }
      res.end(']}');
    } finally {
      release();
    }
  });
  return router;
}
