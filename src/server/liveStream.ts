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
  /**
   * Of `maxClients`, slots only requests with a key (admin or view) may take, so that a dashboard
   * with a key can always stream however many clients without one are connected; default 4.
   */
  readonly reservedForKeys?: number;
  /** Most streams without a key from one client address; more get 429; default 4. */
  readonly maxPerAddress?: number;
  /** The client's reconnection delay sent as `retry:`, ms; default 3000. */
  readonly retryMs?: number;
}

/**
 * A handler serving the stream of `snapshot()` (any JSON value; `time` is added). `hasKey(req)`
 * tells a request that presented a valid key (it may take the reserved slots and is not held to
 * the per-address limit). Refusals are JSON with a message and `Retry-After`: 429 when one address
 * holds its share, 503 when the slots are full; either way GET /api/live still answers.
 */
export function liveStream(snapshot: () => object, options: LiveStreamOptions = {}, hasKey: (req: Request) => boolean = () => false): RequestHandler {
  const { intervalMs = 500, heartbeatMs = 15_000, maxClients = 32, retryMs = 3000, reservedForKeys = 4, maxPerAddress = 4 } = options;
  if (!(intervalMs >= 10)) throw new RangeError(`options.intervalMs must be ≥ 10, got ${intervalMs}`);
  if (!(Number.isInteger(reservedForKeys) && reservedForKeys >= 0 && reservedForKeys <= maxClients)) throw new RangeError(`options.reservedForKeys must be a whole number from 0 to maxClients (${maxClients}), got ${reservedForKeys}`);
  let clients = 0;
  let keyless = 0;
  const byAddress = new Map<string, number>();
  const retry = { 'Retry-After': '10' };
  return (req: Request, res: Response) => {
    const keyed = hasKey(req);
    const address = req.ip ?? req.socket.remoteAddress ?? 'unknown';
    if (keyed) {
      if (clients >= maxClients) throw new HttpError(503, `all ${maxClients} live stream slots are in use; the dashboard falls back to polling GET /api/live`, retry);
    } else {
      if ((byAddress.get(address) ?? 0) >= maxPerAddress) {
        throw new HttpError(429, `too many live streams from this address (at most ${maxPerAddress} without a key); close a tab, poll GET /api/live, or enter a key`, retry);
      }
      if (keyless >= maxClients - reservedForKeys) {
        throw new HttpError(503, `all ${maxClients - reservedForKeys} live stream slots for clients without a key are in use; poll GET /api/live, or enter a key`, retry);
      }
      keyless++;
      byAddress.set(address, (byAddress.get(address) ?? 0) + 1);
    }
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
      if (!keyed) {
        keyless--;
        const left = (byAddress.get(address) ?? 1) - 1;
        if (left > 0) byAddress.set(address, left);
        else byAddress.delete(address);
      }
    };
    res.once('close', done);
  };
}
