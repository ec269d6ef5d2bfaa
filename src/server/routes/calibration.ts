import express, { Router, type Request } from 'express';
import { CalibrationError } from '../../counting/zoneCalibration.ts';
import type { ServerContext } from '../context.ts';
import { HttpError } from '../HttpError.ts';
import { cameraParam, jsonObject, serviceOf } from '../requestFields.ts';
import type { ServiceControl } from '../serviceControl.ts';
import { BODY_LIMIT } from './cameras.ts';

/**
 * Calibration from a few counts: someone who sees the room says how many people are in a room
 * zone now, a handful of times; each zone then fits a regression of the count on what the camera
 * measures there (see fitCountRegression) and is counted by it where it beats counting by blob
 * sizes. Only numbers are kept, never a frame.
 * - `GET /api/cameras/:id/calibration` (view): `{ camera, zones: [ZoneCalibrationStatus, …] }` for
 *   the camera's room zones: the counts given, the leave-one-out error of the regression and the
 *   blob rule's error at the same moments, whether it is used, in words;
 * - `POST /api/cameras/:id/zones/:zone/calibration` (admin) `{ "count": N }`: "there are N people
 *   in this zone now" (N a whole number 0..10000), taken with the camera's last counted frame;
 *   200 with the zone's status; 409 when the camera cannot take it now (not counting, view changed);
 * - `DELETE /api/cameras/:id/zones/:zone/calibration` (admin): forgets the zone's counts; the zone
 *   is counted by blob sizes again.
 */
export function calibrationRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/cameras/:id/calibration', ctx.auth.view, (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    res.set('Cache-Control', 'no-store').json({ camera: id, zones: control.calibration(id) ?? [] });
  });
  router.post('/cameras/:id/zones/:zone/calibration', ctx.auth.admin, express.json({ limit: BODY_LIMIT }), async (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    const zone = roomZoneParam(req, control, id);
    const body = jsonObject(req);
    for (const key of Object.keys(body)) if (key !== 'count') throw new HttpError(400, `request body: ${key} is not expected (send { "count": N })`);
    const count = body.count;
    if (typeof count !== 'number' || !Number.isInteger(count) || count < 0 || count > 10_000) {
      throw new HttpError(400, `request body: count must be a whole number of people from 0 to 10000, got ${JSON.stringify(count) ?? 'nothing'}`);
    }
    try {
      const status = await control.calibrate(id, zone, count, 'admin');
      res.json({ camera: id, ...status });
    } catch (error) {
      if (error instanceof CalibrationError) throw new HttpError(409, error.message);
      throw error;
    }
  });
  router.delete('/cameras/:id/zones/:zone/calibration', ctx.auth.admin, (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    const zone = roomZoneParam(req, control, id);
    const removed = control.clearCalibration(id, zone, 'admin');
    res.json({ camera: id, zone, removed });
  });
  return router;
}

/** The `:zone` path parameter, a room zone of the camera (404 otherwise, 409 for a shelf zone). */
function roomZoneParam(req: Request, control: ServiceControl, camera: string): string {
  const raw = String(req.params.zone);
  const zone = control.zones(camera)?.find((z) => z.id === raw);
  if (zone === undefined) throw new HttpError(404, `camera ${JSON.stringify(camera)} has no zone ${JSON.stringify(raw.slice(0, 64))}`);
  if (zone.kind !== 'room') throw new HttpError(409, `zone ${JSON.stringify(raw)} is a shelf zone; only room zones count people`);
  return zone.id;
}
