import { Router } from 'express';
import type { StoredEvent } from '../../store/index.ts';
import { ID_PATTERN } from '../../store/validate.ts';
import type { ServerContext } from '../context.ts';
import { HttpError } from '../HttpError.ts';
import { queryInt } from '../requestFields.ts';

/** Most events one answer carries (the newest). */
export const MAX_EVENTS = 200;

/** Who caused an event, as the log shows it. */
export type EventActor = 'admin' | 'service';

export interface CameraEvent {
  readonly id: number;
  /** UTC epoch ms. */
  readonly time: number;
  readonly type: StoredEvent['type'];
  /** The zone concerned, or null for the whole camera. */
  readonly zone: string | null;
  /** `admin`: a change made with the admin key (dashboard or API); `service`: the service noticed or did it itself. */
  readonly by: EventActor;
  readonly detail: unknown;
}

/**
 * A camera's event log, for the dashboard's "What happened" list:
 * - `GET /api/cameras/:id/events[?days=N]` (view): `{ camera, from, events }`, the newest
 *   {@link MAX_EVENTS} events of the last N days (1..90, default 7), newest first: learned,
 *   learning rejected, view changed or restored, offline, online, over capacity, settings changed,
 *   a kept empty scene put to use; each with `by` (who caused it) and the stored `detail`.
 */
export function eventRoutes(ctx: ServerContext): Router {
  const router = Router();
  router.get('/cameras/:id/events', ctx.auth.view, (req, res) => {
    // Cameras known to the store, so that the log also reads where no service runs (a collector's database).
    const id = req.params.id;
    if (typeof id !== 'string' || !ID_PATTERN.test(id) || !ctx.store.listCameras().some((c) => c.id === id)) {
      throw new HttpError(404, `no camera ${JSON.stringify(String(id).slice(0, 64))}`);
    }
    const days = queryInt(req, 'days', 1, 90) ?? 7;
    const from = Date.now() - days * 86_400_000;
    // The store lists oldest first; a week of a flapping camera stays far below this bound.
    const stored = ctx.store.listEvents({ camera: id, from, limit: 100_000 });
    const events: CameraEvent[] = stored
      .slice(-MAX_EVENTS)
      .reverse()
      .map((e) => ({ id: e.id, time: e.time, type: e.type, zone: e.zone, by: actorOf(e), detail: e.detail }));
    res.set('Cache-Control', 'no-store').json({ camera: id, from, events });
  });
  return router;
}

/**
 * Zone and settings changes come only through the admin routes, and a kept empty scene is put to
 * use by whoever its detail names (`by`); everything else the service notices or does itself.
 */
export function actorOf(event: Pick<StoredEvent, 'type' | 'detail'>): EventActor {
  const by = (event.detail as { by?: unknown } | null)?.by;
  if (by === 'admin') return 'admin';
  if (event.type === 'settings-changed') return 'admin';
  return 'service';
}
