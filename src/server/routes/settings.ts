import { Router } from 'express';
import { jsonBody } from '../jsonBody.ts';
import type { ServerContext } from '../context.ts';
import { DISPLAY_SETTING, mergeDisplaySettings } from '../displaySettings.ts';
import { jsonObject } from '../requestFields.ts';

/**
 * Display settings (when a room reads as nearly full, when a shelf reads as running low):
 * - `GET /api/settings` (view);
 * - `PUT /api/settings` (admin) with any of `nearCapacity` (0 < share ≤ 1), `defaultLowStock`
 *   (0..1) and `lowStock` (`{ "camera/zone": fill 0..1, or null to drop }`); 400 names the field.
 */
export function settingsRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/settings', ctx.auth.view, (_req, res) => {
    res.set('Cache-Control', 'no-store').json(ctx.display());
  });
  router.put('/settings', ctx.auth.admin, jsonBody(), (req, res) => {
    const next = mergeDisplaySettings(ctx.display(), jsonObject(req));
    ctx.store.setSetting(DISPLAY_SETTING, next);
    ctx.log('display settings changed from the dashboard');
    res.json(next);
  });
  return router;
}
