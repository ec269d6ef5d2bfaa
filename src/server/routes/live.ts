import { Router } from 'express';
import type { ServerContext } from '../context.ts';
import { liveStream, type LiveStreamOptions } from '../liveStream.ts';

/**
 * Live counts (view access):
 * - `GET /api/live`: every camera with its status and every zone with its level, now;
 * - `GET /api/live/stream`: the same as Server-Sent Events (`event: live`), sent when it changes.
 */
export function liveRoutes(ctx: ServerContext, options: LiveStreamOptions = {}): Router {
  const router = Router();
  router.get('/live', ctx.auth.view, (_req, res) => {
    res.set('Cache-Control', 'no-store').json({ time: Date.now(), ...ctx.liveView() });
  });
  router.get('/live/stream', ctx.auth.view, liveStream(() => ctx.liveView(), options, (req) => ctx.auth.role(req) !== 'none'));
  return router;
}
