import express, { type NextFunction, type Request, type Response } from 'express';
import type { CameraLive } from '../counting/cameraPipeline.ts';
import { hourlyRows, writeHourlyCsv } from '../outputs/hourlyCsv.ts';
import type { Store } from '../store/index.ts';
import type { ServiceControl } from './serviceControl.ts';

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
}

/** An error with the HTTP status to answer. */
export class HttpError extends Error {
  constructor(readonly status: number, message: string) {
    super(message);
  }
}

/**
 * The JSON API of the service (listening is the caller's job, so tests drive it on listen(0)).
 * Counts only: no route serves a frame or anything derived from one besides the counts.
 */
export function createApp(deps: AppDeps): express.Express {
  const { store, live, siteName, timeZone, startedAt } = deps;
  const app = express();
  app.disable('x-powered-by');

  app.get('/api/health', (_req, res) => {
    const cameras = live().map((c) => ({ camera: c.camera, state: c.state, viewChanged: c.viewChanged, lastFrameAt: c.lastFrameAt ?? null }));
    res.json({ ok: true, site: siteName, timeZone, startedAt, cameras });
  });

  app.get('/api/live', (_req, res) => {
    res.json({ time: Date.now(), cameras: live() });
  });

  app.get('/api/export/hourly.csv', (req, res) => {
    const from = queryText(req, 'from');
    const to = queryText(req, 'to');
    const camera = optionalQueryText(req, 'camera');
    const zone = optionalQueryText(req, 'zone');
    let rows;
    try {
      rows = hourlyRows(store, { from, to, timeZone, maxHours: 24 * 400, ...(camera && { camera }), ...(zone && { zone }) });
    } catch (error) {
      throw new HttpError(400, (error as Error).message);
    }
    res.type('text/csv; charset=utf-8');
    res.attachment(`residuum-hourly-${from}-${to}.csv`);
    res.send(writeHourlyCsv(rows));
  });

  app.use('/api', (_req, _res, next) => next(new HttpError(404, 'no such API route')));

  app.use((error: unknown, _req: Request, res: Response, _next: NextFunction) => {
    const status = error instanceof HttpError ? error.status : (error as { status?: number }).status ?? 500;
    const message = status >= 500 ? 'internal error' : (error as Error).message;
    res.status(status).json({ error: message });
  });
  return app;
}

function queryText(req: Request, name: string): string {
  const v = req.query[name];
  if (typeof v !== 'string' || v === '') throw new HttpError(400, `query parameter ${name} is required (a date YYYY-MM-DD or an ISO 8601 time)`);
  if (v.length > 64) throw new HttpError(400, `query parameter ${name} is too long`);
  return v;
}

function optionalQueryText(req: Request, name: string): string | undefined {
  const v = req.query[name];
  if (v === undefined) return undefined;
  if (typeof v !== 'string' || !/^[A-Za-z0-9][A-Za-z0-9_-]{0,63}$/.test(v)) throw new HttpError(400, `query parameter ${name} must be an id (letters, digits, - and _)`);
  return v;
}
