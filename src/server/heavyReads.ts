import type { Request } from 'express';
import { HttpError } from './HttpError.ts';

/**
 * Limits on long history and export reads by clients without a key (with `server.viewToken:
 * false` anyone who reaches the server may read counts). A read over more than `longRangeHours`
 * is *long*: one address may start `perAddress` long reads per `windowMs` (then 429 with
 * Retry-After), and at most `concurrent` long reads without a key run at once (then 503). Reads
 * with a key (admin or view) are not limited; short reads (the dashboard's day and week) never.
 */
export interface HeavyReadOptions {
  /** A read over more local hours than this is long; default 744 (31 days). */
  readonly longRangeHours?: number;
  /** Long reads one address may start per window; default 6. */
  readonly perAddress?: number;
  /** The window of `perAddress`, ms; default 600 000 (10 minutes). */
  readonly windowMs?: number;
  /** Long reads without a key running at once; default 2. */
  readonly concurrent?: number;
}

export interface HeavyReadGate {
  /** Admits a read (throws HttpError 429 or 503 when it may not run now); call the returned function when it ends. */
  enter(req: Request, hours: number, keyed: boolean): () => void;
}

export function heavyReadGate(options: HeavyReadOptions = {}): HeavyReadGate {
  const { longRangeHours = 744, perAddress = 6, windowMs = 600_000, concurrent = 2 } = options;
  const started = new Map<string, number[]>();
  let running = 0;
  const nothing = () => {};
  return {
    enter(req, hours, keyed) {
      if (keyed || hours <= longRangeHours) return nothing;
      const address = req.ip ?? req.socket.remoteAddress ?? 'unknown';
      const now = Date.now();
      const recent = (started.get(address) ?? []).filter((t) => now - t < windowMs);
      if (recent.length >= perAddress) {
        const wait = Math.max(1, Math.ceil((recent[0] + windowMs - now) / 1000));
        throw new HttpError(429, `too many long reads from this address: at most ${perAddress} ranges over ${Math.round(longRangeHours / 24)} days per ${Math.round(windowMs / 60_000)} minutes without a key; try again in ${wait} s, ask for shorter ranges, or use a key`, { 'Retry-After': String(wait) });
      }
      if (running >= concurrent) {
        throw new HttpError(503, `${concurrent} long reads without a key are running; try again in a few seconds, or ask for a range of ${Math.round(longRangeHours / 24)} days or less`, { 'Retry-After': '5' });
      }
      recent.push(now);
      started.set(address, recent);
      // Forget addresses whose window has passed (bounded memory under many addresses).
      if (started.size > 10_000) for (const [a, times] of started) if (times.every((t) => now - t >= windowMs)) started.delete(a);
      running++;
      let done = false;
      return () => {
        if (done) return;
        done = true;
        running--;
      };
    },
  };
}
