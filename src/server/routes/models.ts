import { Router } from 'express';
import type { ServerContext } from '../context.ts';
import { HttpError } from '../HttpError.ts';
import { cameraParam, serviceOf } from '../requestFields.ts';
import { ModelChoiceError } from '../serviceControl.ts';

/**
 * A camera's kept empty-scene models and the roll-back to one of them (admin only: choosing the
 * model changes counting):
 * - `GET /api/cameras/:id/models`: `{ camera, models: [KeptModel, …] }`, newest first — id, when
 *   learned, frames, components, verdict (level and findings), active and rejected flags; never pixels;
 * - `POST /api/cameras/:id/models/:modelId/activate`: the camera counts with that model from its
 *   next frame (no restart); stores a `model-activated` event; `{ camera, model, changed }`.
 * 404 names the unknown camera or model; 409 for a model that does not fit the camera.
 */
export function modelRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/cameras/:id/models', ctx.auth.admin, (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    res.set('Cache-Control', 'no-store').json({ camera: id, models: control.models(id) ?? [] });
  });
  router.post('/cameras/:id/models/:modelId/activate', ctx.auth.admin, (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    const raw = String(req.params.modelId);
    const modelId = /^[1-9]\d{0,14}$/.test(raw) ? Number(raw) : undefined;
    const notFound = () => new HttpError(404, `camera ${JSON.stringify(id)} has no model ${JSON.stringify(raw.slice(0, 32))}`);
    if (modelId === undefined) throw notFound();
    let result;
    try {
      result = control.activateModel(id, modelId, 'admin');
    } catch (error) {
      if (error instanceof ModelChoiceError) throw new HttpError(409, error.message);
      throw error;
    }
    if (!result) throw notFound();
    if (result.changed) ctx.log(`camera ${id}: model ${modelId} put to use by the admin`);
    res.json({ camera: id, model: result.model, changed: result.changed });
  });
  return router;
}
