import express, { Router } from 'express';
import type { ServerContext } from '../context.ts';
import { HttpError } from '../HttpError.ts';
import { serviceOf } from '../requestFields.ts';
import { CameraSetupError, type ServiceControl } from '../serviceControl.ts';
import { BODY_LIMIT } from './cameras.ts';

/**
 * Adding and removing cameras from the dashboard (admin):
 * - `POST /api/cameras` with `{ id, name, source: { kind: "snapshot" | "mjpeg", url, username,
 *   password, … }, size, learnSeconds, sampleSeconds, zones }`: the source is checked first (it
 *   must answer with a picture that decodes at the working size; without `size`, the working size
 *   follows the camera's own shape), then the camera is stored (it runs again after a restart) and
 *   started at once. 201 `{ camera: { id, name, kind, url, size, sourceSize, learnSeconds, state } }`
 *   (the URL without credentials or query values, never the password); 400 names the field (and
 *   for a source that gives no picture, says why); 409 for an id in use.
 * - `DELETE /api/cameras/:id`: stops and forgets a camera added this way; its stored counts stay.
 *   404 for an unknown camera, 409 for one of the configuration file.
 */
export function cameraAdminRoutes(ctx: ServerContext): Router {
  const router = Router();
  const json = express.json({ limit: BODY_LIMIT });
  const admin = (): Required<Pick<ServiceControl, 'addCamera' | 'removeCamera'>> => {
    const control = serviceOf(ctx);
    if (!control.addCamera || !control.removeCamera) throw new HttpError(503, 'this service cannot add or remove cameras');
    return { addCamera: control.addCamera.bind(control), removeCamera: control.removeCamera.bind(control) };
  };
  const answer = (error: unknown): never => {
    if (error instanceof CameraSetupError) throw new HttpError(error.status, error.message);
    throw error;
  };

  router.post('/cameras', ctx.auth.admin, json, async (req, res) => {
    const { addCamera } = admin();
    if (req.body === undefined) throw new HttpError(400, 'request body must be a JSON object sent with Content-Type: application/json');
    const camera = await addCamera(req.body, 'admin').catch(answer);
    res.status(201).json({ camera });
  });

  router.delete('/cameras/:id', ctx.auth.admin, async (req, res) => {
    const { removeCamera } = admin();
    const id = String(req.params.id);
    if (!/^[A-Za-z0-9][A-Za-z0-9_-]{0,63}$/.test(id)) throw new HttpError(404, `no camera ${JSON.stringify(id.slice(0, 64))}`);
    await removeCamera(id, 'admin').catch(answer);
    res.json({ camera: id, removed: true });
  });
  return router;
}
