import { Router } from 'express';
import { jsonBody } from '../jsonBody.ts';
import type { ServerContext } from '../context.ts';
import { HttpError } from '../HttpError.ts';
import { rateLimit } from '../rateLimit.ts';
import { cameraParam, jsonObject, serviceOf } from '../requestFields.ts';

/**
 * Learning the empty scene from the live source:
 * - `POST /api/cameras/:id/learn` (admin) `{ "seconds": 30 }`: starts learning from the next
 *   `seconds` (1..3600) of frames; counting goes on with the old model meanwhile; 202 with the status;
 *   at most once a minute and 10 times an hour per camera (429 with Retry-After);
 * - `GET /api/cameras/:id/learn` (view): the learning status and the current model's figures and
 *   verdict. Progress also arrives in the live stream (`cameras[].learn`).
 */
export function learnRoutes(ctx: ServerContext): Router {
  const router = Router();
  // Each start replaces the empty scene after its seconds and keeps a model of about 4 MB: at most
  // once a minute and 10 times an hour per camera. A request while learning runs starts nothing.
  const starts = rateLimit({ max: 10, windowMs: 3_600_000, minGapMs: 60_000 });
  router.post('/cameras/:id/learn', ctx.auth.admin, jsonBody(), (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    const body = jsonObject(req);
    for (const key of Object.keys(body)) if (key !== 'seconds') throw new HttpError(400, `request body: ${key} is not expected (send { "seconds": N })`);
    const seconds = body.seconds;
    if (typeof seconds !== 'number' || !Number.isFinite(seconds) || seconds < 1 || seconds > 3600) {
      throw new HttpError(400, `request body: seconds must be a number from 1 to 3600, got ${JSON.stringify(seconds) ?? 'nothing'}`);
    }
    if (control.learnStatus(id)?.state !== 'learning') {
      const wait = starts.take(id);
      if (wait > 0) {
        const s = Math.ceil(wait / 1000);
        throw new HttpError(429, `learning of camera ${id} may start at most once a minute and 10 times an hour; try again in ${s} s`, { 'Retry-After': String(s) });
      }
    }
    const status = control.learn(id, seconds);
    ctx.log(`camera ${id}: learning the empty scene for ${seconds} s, started from the dashboard`);
    res.status(202).json({ camera: id, status });
  });
  router.get('/cameras/:id/learn', ctx.auth.view, (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    res.set('Cache-Control', 'no-store').json({ camera: id, status: control.learnStatus(id) ?? null, model: control.modelSummary(id) ?? null });
  });
  return router;
}
