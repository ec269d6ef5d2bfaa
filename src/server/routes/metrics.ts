import { Router } from 'express';
import type { Metrics } from '../../outputs/metrics.ts';
import type { ServerContext } from '../context.ts';

/**
 * `GET /metrics`: the Prometheus text exposition of the service's metrics (per-zone counts,
 * frames per second, stage times, source errors, age of the last frame). Counts are in it, so it
 * needs the view key when viewing does.
 */
export function metricsRoutes(ctx: ServerContext, metrics: Metrics): Router {
  const router = Router();
  router.get('/metrics', ctx.auth.view, async (_req, res) => {
    res.type(metrics.contentType).send(await metrics.render());
  });
  return router;
}
