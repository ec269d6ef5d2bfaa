import { Router } from 'express';
import { jsonBody } from '../jsonBody.ts';
import sharp from 'sharp';
import { ZoneError } from '../../counting/parseZones.ts';
import type { ServerContext } from '../context.ts';
import { HttpError } from '../HttpError.ts';
import { rateLimit } from '../rateLimit.ts';
import { cameraParam, jsonObject, queryChoice, queryInt, serviceOf } from '../requestFields.ts';
import type { SmallImage } from '../serviceControl.ts';

/** Smallest cell of the foreground preview, pixels of the working frame (inclusive). */
export const MIN_MASK_CELL = 8;
/** Foreground previews per camera per second. */
export const MASKS_PER_SECOND = 2;

export { BODY_LIMIT } from '../jsonBody.ts';

/**
 * Cameras and their zones:
 * - `GET /api/cameras` (view): each camera with its zones, model figures and learning status;
 * - `GET /api/cameras/:id/zones` (view): the zones counted now;
 * - `PUT /api/cameras/:id/zones` (admin): `{ "zones": [Zone, …] }` replaces them (validated, stored
 *   with history, applied at once); 400 names the field;
 * - `GET /api/cameras/:id/zones/history` (view): every change, oldest first;
 * - `GET /api/cameras/:id/background.png` (admin): the learned empty scene, PNG made in memory;
 * - `GET /api/cameras/:id/mask?format=json|png&cell=N` (admin): the coarse foreground mask of the
 *   last frame in cells of N = 8..32 pixels (default 8), computed on request, never stored or
 *   cached, at most 2 a second per camera (429).
 */
export function cameraRoutes(ctx: ServerContext): Router {
  const router = Router();
  // The foreground preview, coarse and slow enough never to be a silhouette video: cells of at
  // least 8 pixels, at most 2 previews a second per camera.
  const masks = rateLimit({ max: MASKS_PER_SECOND, windowMs: 1000 });
  const json = jsonBody();

  router.get('/cameras', ctx.auth.view, (_req, res) => {
    const control = serviceOf(ctx);
    const live = new Map(ctx.live().map((c) => [c.camera, c]));
    const cameras = control.cameras().map((c) => ({
      id: c.camera,
      name: c.name,
      state: live.get(c.camera)?.state ?? c.state,
      zones: control.zones(c.camera) ?? [],
      model: control.modelSummary(c.camera) ?? null,
      learn: control.learnStatus(c.camera) ?? null,
    }));
    res.set('Cache-Control', 'no-store').json({ cameras });
  });

  router.get('/cameras/:id/zones', ctx.auth.view, (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    res.set('Cache-Control', 'no-store').json({ camera: id, zones: control.zones(id) });
  });

  router.put('/cameras/:id/zones', ctx.auth.admin, json, (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    const body = jsonObject(req);
    for (const key of Object.keys(body)) if (key !== 'zones') throw new HttpError(400, `request body: ${key} is not expected (send { "zones": [...] })`);
    let zones;
    try {
      zones = control.setZones(id, body);
    } catch (error) {
      if (error instanceof ZoneError || error instanceof RangeError || error instanceof TypeError) throw new HttpError(400, (error as Error).message);
      throw error;
    }
    try {
      ctx.store.insertEvent({ camera: id, type: 'settings-changed', detail: { what: 'zones', zones: zones.map((z) => z.id) } });
    } catch {
      // the zone history is the record; an event that cannot be stored does not undo the change
    }
    ctx.log(`camera ${id}: zones changed from the dashboard (${zones.map((z) => z.id).join(', ')})`);
    res.json({ camera: id, zones });
  });

  router.get('/cameras/:id/zones/history', ctx.auth.view, (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    res.set('Cache-Control', 'no-store').json({ camera: id, history: ctx.store.zoneHistory(id) });
  });

  router.get('/cameras/:id/background.png', ctx.auth.admin, async (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    const image = control.background(id);
    if (!image) throw new HttpError(404, `camera ${id} has no learned empty scene yet`);
    res.set('Cache-Control', 'no-store').type('image/png').send(await greyPng(image, 1));
  });

  router.get('/cameras/:id/mask', ctx.auth.admin, async (req, res) => {
    const control = serviceOf(ctx);
    const id = cameraParam(req, control);
    const format = queryChoice(req, 'format', ['json', 'png'] as const) ?? 'json';
    const cell = queryInt(req, 'cell', MIN_MASK_CELL, 32) ?? MIN_MASK_CELL;
    const wait = masks.take(id);
    if (wait > 0) {
      throw new HttpError(429, `the foreground preview of camera ${id} is limited to ${MASKS_PER_SECOND} a second; try again in ${wait} ms`, { 'Retry-After': '1', 'Cache-Control': 'no-store' });
    }
    const mask = control.maskPreview(id, cell);
    if (!mask) throw new HttpError(404, `camera ${id} has not counted a frame yet`);
    res.set('Cache-Control', 'no-store');
    if (format === 'png') {
      res.type('image/png').send(await greyPng(mask, 255));
      return;
    }
    const rows: string[] = [];
    for (let y = 0; y < mask.height; y++) {
      let row = '';
      for (let x = 0; x < mask.width; x++) row += mask.data[y * mask.width + x] ? '1' : '0';
      rows.push(row);
    }
    res.json({ camera: id, cell, width: mask.width, height: mask.height, time: Date.now(), rows });
  });
  return router;
}

/** An 8-bit grey PNG of `image` (values multiplied by `scale`), encoded in memory by sharp. */
async function greyPng(image: SmallImage, scale: number): Promise<Buffer> {
  const data = scale === 1 ? image.data : Uint8Array.from(image.data, (v) => Math.min(255, v * scale));
  return sharp(Buffer.from(data.buffer, data.byteOffset, data.byteLength), { raw: { width: image.width, height: image.height, channels: 1 } })
    .toColourspace('b-w')
    .png()
    .toBuffer();
}
