import { Router } from 'express';
import type { PersonSizeSuggestion } from '../../counting/createPersonSizeReservoir.ts';
import type { ServerContext } from '../context.ts';
import { cameraParam, serviceOf } from '../requestFields.ts';

/**
 * The person size a camera has learned from people seen alone (see createPersonSizeReservoir and
 * learnPersonArea):
 * - `GET /api/cameras/:id/person-size` (view): `{ camera, state, message, observations, seen,
 *   supporting, intercept, slope, rows, aspect }`. `state` is `ready`, `too-few` or
 *   `rows-not-spread` (then `message` says why); when ready, √area = intercept + slope · y gives
 *   the area of one person (fraction of the frame) whose feet are at the normalised row y, `rows`
 *   the 10th–90th percentile of the foot rows it was learned from, and `aspect` the people's
 *   median box height ÷ width (each as a share of the frame's height and width). The zone
 *   editor turns it into reference boxes of a zone's `perspective`.
 */
export function personSizeRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/cameras/:id/person-size', ctx.auth.view, (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    const suggestion: PersonSizeSuggestion = ctx.live().find((c) => c.camera === id)?.personSize ?? {
      state: 'too-few',
      message: 'this camera has not counted a frame yet',
      observations: 0,
      seen: 0,
      supporting: 0,
    };
    res.set('Cache-Control', 'no-store').json({ camera: id, ...suggestion });
  });
  return router;
}
