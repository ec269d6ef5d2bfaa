import type { Request, RequestHandler, Response } from 'express';
import { HttpError } from './HttpError.ts';

/**
 * Server-Sent Events (WHATWG HTML Living Standard, §9.2 "Server-sent events") of the live state:
 * on connect one `live` event with the whole state, then another whenever it changed, checked
 * every `intervalMs` (so a fast camera sends at most one event per interval, not one per frame).
 * A comment line keeps idle connections open through proxies.
 *
 * ```
 * event: live
 * data: {"time":1767225600000,"nearCapacity":0.8,"cameras":[…]}
 *
 * ```
 */
export interface LiveStreamOptions {
  /** How often the state is checked for changes, ms; ≥ 10, default 500. */
  readonly intervalMs?: number;
  /** A keep-alive comment after this long without an event, ms; default 15 000. */
  readonly heartbeatMs?: number;
  /** Most streams open at once; more get 503; default 32. */
  readonly maxClients?: number;
  /** The client's reconnection delay sent as `retry:`, ms; default 3000. */
  readonly retryMs?: number;
}

/** A handler serving the stream of `snapshot()` (any JSON value; `time` is added). */
export function liveStream(snapshot: () => object, options: LiveStreamOptions = {}): RequestHandler {
  const { intervalMs = 500, heartbeatMs = 15_000, maxClients = 32, retryMs = 3000 } = options;
  if (!(intervalMs >= 10)) throw new RangeError(`options.intervalMs must be ≥ 10, got ${intervalMs}`);
  let clients = 0;
  return (_req: Request, res: Response) => {
    if (clients >= maxClients) throw new HttpError(503, `too many live streams open (${maxClients}); close a dashboard tab or poll GET /api/live`);
    clients++;
    res.status(200).set({
      'Content-Type': 'text/event-stream; charset=utf-8',
      'Cache-Control': 'no-store',
      Connection: 'keep-alive',
      'X-Accel-Buffering': 'no',
    });
    res.flushHeaders();
    res.write(`retry: ${retryMs}\n\n`);
    let last = '';
    let lastWrite = Date.now();
    const tick = () => {
      let text: string;
      try {
        text = JSON.stringify(snapshot());
      } catch {
        return;
      }
      const now = Date.now();
      if (text !== last) {
        last = text;
        lastWrite = now;
        res.write(`event: live\ndata: {"time":${now}${text.length > 2 ? ',' + text.slice(1) : '}'}\n\n`);
      } else if (now - lastWrite >= heartbeatMs) {
        lastWrite = now;
        res.write(': still here\n\n');
      }
    };
    tick();
    const timer = setInterval(tick, intervalMs);
    timer.unref();
    const done = () => {
      clearInterval(timer);
      clients--;
    };
    res.once('close', done);
  };
}
