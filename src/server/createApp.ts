import { createRequire } from 'node:module';
import { dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
import express, { type NextFunction, type Request, type Response } from 'express';
import helmet from 'helmet';
import type { CameraLive } from '../counting/cameraPipeline.ts';
import type { Store } from '../store/index.ts';
import { createAuth } from './auth.ts';
import type { ServerContext } from './context.ts';
import { readDisplaySettings } from './displaySettings.ts';
import type { FailureLimiter } from './failureLimiter.ts';
import { heavyReadGate, type HeavyReadOptions } from './heavyReads.ts';
import { HttpError } from './HttpError.ts';
import type { LiveStreamOptions } from './liveStream.ts';
import { liveView } from './liveView.ts';
import { calibrationRoutes } from './routes/calibration.ts';
import { cameraRoutes } from './routes/cameras.ts';
import { cameraAdminRoutes } from './routes/cameraAdmin.ts';
import { capacityRoutes } from './routes/capacity.ts';
import { eventRoutes } from './routes/events.ts';
import { exportRoutes } from './routes/export.ts';
import { healthRoutes } from './routes/health.ts';
import { historyRoutes } from './routes/history.ts';
import { learnRoutes } from './routes/learn.ts';
import { liveRoutes } from './routes/live.ts';
import { modelRoutes } from './routes/models.ts';
import { personSizeRoutes } from './routes/personSize.ts';
import { settingsRoutes } from './routes/settings.ts';
import { todayRoutes } from './routes/today.ts';
import type { ServiceControl } from './serviceControl.ts';
import type { Metrics } from '../outputs/metrics.ts';
import { metricsRoutes } from './routes/metrics.ts';
import { openApiDocument } from './openapi.ts';
import type { Log } from '../domain/log.ts';

export { HttpError } from './HttpError.ts';

/** What the HTTP app needs from the running service. */
export interface AppDeps {
  readonly store: Store;
  /** Zone editing, background, mask preview and learning of the running service. */
  readonly control?: ServiceControl;
  /** Current state of every camera. */
  readonly live: () => readonly CameraLive[];
  readonly siteName: string;
  readonly timeZone: string;
  /** When the service started, epoch ms. */
  readonly startedAt: number;
  /** Whether reading counts needs a token (config server.viewToken); default false. */
  readonly viewTokenRequired?: boolean;
  /** Days raw samples are kept (config storage.sampleRetentionDays), shown in the privacy notice. */
  readonly sampleRetentionDays?: number;
  /**
   * The address the server listens on (config server.host). When it is a loopback address, only
   * requests whose Host header names a loopback host are served (421 otherwise), so a web page
   * cannot reach the dashboard through DNS rebinding. Default: no Host check.
   */
  readonly host?: string;
  /** Limiter of failed key attempts; default 10 per minute per address. */
  readonly limiter?: FailureLimiter;
  /** Live stream timing and slots; default a check every 500 ms, 32 slots. */
  readonly stream?: LiveStreamOptions;
  /** Limits on long history and export reads without a key (see heavyReadGate); default its defaults. */
  readonly heavyReads?: HeavyReadOptions;
  /** Service log lines (never a token). Default: none. */
  readonly log?: Log;
  /** Metrics registry served at GET /metrics (Prometheus text format); default: no such route. */
  readonly metrics?: Metrics;
}

/** The dashboard's files. */
export const WEB_DIR = fileURLToPath(new URL('../../web/', import.meta.url));

/**
 * The dashboard and JSON API of the service (listening is the caller's job, so tests drive it on
 * listen(0)). Counts only: besides them, no route serves anything derived from a frame except the
 * learned empty scene and, on request, a coarse foreground mask — both to the admin only.
 *
 * Security: helmet's headers with a strict Content-Security-Policy (scripts, styles and
 * connections from this origin only, no inline script or style, no framing); every change needs
 * the admin token as `Authorization: Bearer …` (src/server/auth.ts); JSON bodies are limited to
 * 256 kB and validated with messages naming the field; one error handler answers JSON.
 */
export function createApp(deps: AppDeps): express.Express {
  const { store, viewTokenRequired = false, log = () => {} } = deps;
  const auth = createAuth(store, { viewTokenRequired, log, ...(deps.limiter && { limiter: deps.limiter }) });
  const ctx: ServerContext = {
    store,
    control: deps.control,
    live: deps.live,
    siteName: deps.siteName,
    timeZone: deps.timeZone,
    startedAt: deps.startedAt,
    sampleRetentionDays: deps.sampleRetentionDays,
    auth,
    heavyReads: heavyReadGate(deps.heavyReads),
    log,
    display: () => readDisplaySettings(store),
    liveView() {
      const d = readDisplaySettings(store);
      const control = deps.control;
      return liveView(deps.live(), {
        nearCapacity: d.nearCapacity,
        defaultLowStock: d.defaultLowStock,
        lowStock: d.lowStock,
        ...(control && { learn: (camera: string) => control.learnStatus(camera) }),
      });
    },
  };

  const app = express();
  app.disable('x-powered-by');
  app.set('etag', false);
  if (deps.host !== undefined && isLoopback(deps.host)) app.use(loopbackHostOnly);
  app.use(
    helmet({
      contentSecurityPolicy: {
        useDefaults: false,
        directives: {
          defaultSrc: ["'none'"],
          scriptSrc: ["'self'"],
          styleSrc: ["'self'"],
          imgSrc: ["'self'", 'blob:', 'data:'],
          connectSrc: ["'self'"],
          fontSrc: ["'self'"],
          manifestSrc: ["'self'"],
          baseUri: ["'none'"],
          formAction: ["'self'"],
          frameAncestors: ["'none'"],
          objectSrc: ["'none'"],
          scriptSrcAttr: ["'none'"],
        },
      },
      // Served over plain HTTP on the local network; HTTPS and HSTS belong to a reverse proxy.
      strictTransportSecurity: false,
      xFrameOptions: { action: 'deny' },
      referrerPolicy: { policy: 'no-referrer' },
    }),
  );

  const api = express.Router();
  const openApi = JSON.stringify(openApiDocument());
  api.get('/openapi.json', (_req, res) => {
    res.type('application/json').send(openApi);
  });
  api.use(healthRoutes(ctx));
  api.use(liveRoutes(ctx, deps.stream));
  api.use(historyRoutes(ctx));
  api.use(exportRoutes(ctx));
  api.use(cameraRoutes(ctx));
  api.use(cameraAdminRoutes(ctx));
  api.use(learnRoutes(ctx));
  api.use(modelRoutes(ctx));
  api.use(personSizeRoutes(ctx));
  api.use(calibrationRoutes(ctx));
  api.use(settingsRoutes(ctx));
  api.use(capacityRoutes(ctx));
  api.use(eventRoutes(ctx));
  api.use(todayRoutes(ctx));
  api.use((_req, _res, next) => next(new HttpError(404, 'no such API route')));
  app.use('/api', api);
  if (deps.metrics) app.use(metricsRoutes(ctx, deps.metrics));

  app.use('/vendor/uplot', express.static(uplotDir(), { index: false, fallthrough: false }));
  app.use(express.static(WEB_DIR, { index: 'index.html', extensions: ['html'] }));
  app.use((_req, res) => {
    res.status(404).type('text/plain').send('not found');
  });

  app.use((error: unknown, req: Request, res: Response, _next: NextFunction) => {
    const e = error as { status?: number; statusCode?: number; type?: string; message?: string };
    let status = error instanceof HttpError ? error.status : (e.status ?? e.statusCode ?? 500);
    if (!(status >= 400 && status <= 599)) status = 500;
    // An HttpError's message is written for the client, whatever its status (503 "all slots in
    // use…"); any other 5xx is a fault of ours, told in the log, not to the client.
    let message = status >= 500 && !(error instanceof HttpError) ? 'internal error' : String(e.message ?? 'error');
    if (e.type === 'entity.too.large') message = 'request body is larger than 256 kB';
    else if (e.type === 'entity.parse.failed') message = 'request body is not valid JSON';
    if (error instanceof HttpError) res.set(error.headers);
    if (status >= 500 && !(error instanceof HttpError)) log(`internal error on ${req.method} ${req.path}: ${(error as Error)?.message ?? String(error)}`, 'error', { component: 'server' });
    if (res.headersSent) {
      res.end();
      return;
    }
    res.status(status).json({ error: message });
  });
  return app;
}

/** uPlot's dist folder in node_modules, served at /vendor/uplot/. */
function uplotDir(): string {
  return dirname(createRequire(import.meta.url).resolve('uplot'));
}

const LOOPBACK_NAMES = new Set(['localhost', '127.0.0.1', '[::1]', '::1']);

function isLoopback(host: string): boolean {
  return LOOPBACK_NAMES.has(host.toLowerCase()) || /^127\.\d{1,3}\.\d{1,3}\.\d{1,3}$/.test(host);
}

function loopbackHostOnly(req: Request, res: Response, next: NextFunction): void {
  const header = req.headers.host ?? '';
  const name = header.startsWith('[') ? header.slice(0, header.indexOf(']') + 1) : header.split(':')[0];
  if (isLoopback(name) || name.toLowerCase().endsWith('.localhost')) {
    next();
    return;
  }
  res.status(421).json({ error: 'this server listens on a loopback address and answers only requests for localhost or 127.0.0.1' });
}
