import { Router } from 'express';
import type { ServerContext } from '../context.ts';

/**
 * Open routes (no counts in them):
 * - `GET /api/health`: the service is up, and each camera's state;
 * - `GET /api/site`: what the dashboard and the privacy notice need to know about the site;
 * - `GET /api/auth`: the role of the presented key (`none`, `viewer`, `admin`); 401 for a wrong key.
 */
export function healthRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/health', (_req, res) => {
    const cameras = ctx.live().map((c) => ({ camera: c.camera, state: c.state, viewChanged: c.viewChanged, lastFrameAt: c.lastFrameAt ?? null }));
    res.json({ ok: true, site: ctx.siteName, timeZone: ctx.timeZone, startedAt: ctx.startedAt, cameras });
  });
  router.get('/site', (_req, res) => {
    res.json({
      site: ctx.siteName,
      timeZone: ctx.timeZone,
      sampleRetentionDays: ctx.sampleRetentionDays ?? null,
      viewTokenRequired: ctx.auth.viewTokenRequired,
      editing: ctx.control !== undefined,
    });
  });
  router.get('/auth', (req, res) => {
    res.set('Cache-Control', 'no-store').json({ role: ctx.auth.role(req), viewTokenRequired: ctx.auth.viewTokenRequired });
  });
  return router;
}
