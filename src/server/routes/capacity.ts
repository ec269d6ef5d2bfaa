import { Router } from 'express';
import { CAPACITY_CAUTION, CapacityError, OCCUPANT_LOAD_FACTORS, OCCUPANT_LOAD_SOURCE, suggestCapacity } from '../capacity.ts';
import type { ServerContext } from '../context.ts';
import { HttpError } from '../HttpError.ts';
import { queryChoice } from '../requestFields.ts';

/**
 * `GET /api/capacity` (view): the table of uses; `GET /api/capacity?use=&area=&unit=m2|ft2`: a
 * suggested capacity for the area (src/server/capacity.ts), always with its source and caution.
 */
export function capacityRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/capacity', ctx.auth.view, (req, res) => {
    const use = req.query.use;
    if (use === undefined) {
      res.json({ source: OCCUPANT_LOAD_SOURCE, caution: CAPACITY_CAUTION, uses: OCCUPANT_LOAD_FACTORS });
      return;
    }
    const unit = queryChoice(req, 'unit', ['m2', 'ft2'] as const);
    if (unit === undefined) throw new HttpError(400, 'query parameter unit is required: m2 or ft2');
    const areaText = req.query.area;
    if (typeof areaText !== 'string' || !/^\d{1,9}(\.\d{1,6})?$/.test(areaText)) throw new HttpError(400, 'query parameter area must be a positive number (e.g. 120 or 85.5)');
    try {
      res.json(suggestCapacity({ use: String(use), area: Number(areaText), unit }));
    } catch (error) {
      if (error instanceof CapacityError) throw new HttpError(400, `query parameter ${error.message}`);
      throw error;
    }
  });
  return router;
}
