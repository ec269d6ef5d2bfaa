import { randomUUID } from 'node:crypto';
import { backoffDelay, type BackoffOptions } from '../../frames/live/backoff.ts';
import { redactUrl } from '../../frames/live/httpGet.ts';
import type { EventInput } from '../../store/events.ts';
import { alertMessage, type AlertMessage } from './alertMessage.ts';
import type { AlertSettings } from './alertSettings.ts';
import { DeliveryError } from './deliveryError.ts';
import { emptyAlertState, evaluateAlerts, type Alert, type AlertRule, type AlertState, type ObservedCamera } from './evaluateAlerts.ts';
import { createMailSender, type MailSender } from './mailSender.ts';
import { sendWebhook } from './sendWebhook.ts';
import type { Log } from '../../domain/log.ts';

export interface StartAlertsOptions {
  readonly settings: AlertSettings;
  /** The site's name, in every message. */
  readonly site: string;
  /** The live view now: cameras with status and zones with level (src/server/liveView.ts). */
  readonly observe: () => readonly ObservedCamera[];
  /** Where `alert-sent` and `alert-failed` events are written (the main thread's store). */
  readonly events: { insertEvent(event: EventInput): number };
  /** Log lines (never a secret); default none. */
  readonly log?: Log;
  /** Milliseconds between two looks at the live view, ≥ 10; default 1000. */
  readonly checkMs?: number;
  /** Clock, epoch ms; default Date.now. */
  readonly clock?: () => number;
  /** Delays between attempts of one delivery; default 1 s doubling to 60 s, full jitter (see backoff.ts). */
  readonly retryBackoff?: BackoffOptions;
  /** Deliveries waiting or under way at most, ≥ 1; beyond, a new one is recorded as failed at once. Default 1000. */
  readonly maxPending?: number;
}

/** The running alerts. */
export interface AlertService {
  /** Looks at the live view now (the timer does every `checkMs`) and sends what it gives. */
  check(): void;
  /** Deliveries waiting or under way. */
  readonly pending: number;
  /** Resolves once no delivery is waiting or under way. */
  idle(): Promise<void>;
  /** Stops looking; deliveries still waiting are given up and recorded as failed. */
  stop(): Promise<void>;
}

/** One place alerts go. */
interface Channel {
  readonly kind: 'webhook' | 'email';
  /** What the event and log say it went to (a URL without credentials or query values; the recipients). */
  readonly to: string;
  readonly rules: readonly AlertRule[];
  readonly retries: number;
  send(message: AlertMessage, signal: AbortSignal): Promise<void>;
}

/**
 * Watches the live view and sends alerts (see evaluateAlerts for the rules and the quiet period)
 * to every configured webhook and to the e-mail recipients. Runs on the main thread, beside the
 * HTTP server: every delivery is asynchronous with a timeout, retried with backoff when the failure
 * may pass (see DeliveryError), and bounded in number, so a slow or failing receiver never holds up
 * counting (which runs in the camera threads) nor the dashboard. Each alert sent or given up is an
 * event (`alert-sent`, `alert-failed`) of its camera, with the channel, the attempts and the reason.
 */
export function startAlerts(options: StartAlertsOptions): AlertService {
  const { settings, site, observe, events, log = () => {}, checkMs = 1000, clock = Date.now, retryBackoff = {}, maxPending = 1000 } = options;
  if (!(Number.isFinite(checkMs) && checkMs >= 10)) throw new RangeError(`checkMs: expected milliseconds ≥ 10, got ${String(checkMs)}`);
  if (!(Number.isInteger(maxPending) && maxPending >= 1)) throw new RangeError(`maxPending: expected a whole number ≥ 1, got ${String(maxPending)}`);
  const stopping = new AbortController();
  const channels: Channel[] = settings.webhooks.map((hook) => ({
    kind: 'webhook',
    to: redactUrl(hook.url),
    rules: hook.rules,
    retries: hook.retries,
    send: async (message, signal) => {
      await sendWebhook(hook, message, signal);
    },
  }));
  let mail: MailSender | undefined;
  if (settings.email) {
    const email = settings.email;
    const sender = createMailSender(email);
    mail = sender;
    channels.push({ kind: 'email', to: email.to.join(', '), rules: email.rules, retries: email.retries, send: (message, signal) => untilAborted(sender.send(message), signal) });
  }
  let state: AlertState = emptyAlertState();
  const pending = new Set<Promise<void>>();
  let stopped = false;

  function record(type: 'alert-sent' | 'alert-failed', alert: Alert, detail: Record<string, unknown>): void {
    try {
      events.insertEvent({ camera: alert.camera, ...(alert.zone !== undefined && { zone: alert.zone }), type, detail });
    } catch (error) {
      log(`alerts: could not store event ${type} (${(error as Error).message})`, 'error');
    }
  }

  async function deliver(channel: Channel, alert: Alert, message: AlertMessage): Promise<void> {
    const about = { channel: channel.kind, to: channel.to, rule: alert.rule, phase: alert.phase, message: message.id, text: message.text };
    let attempt = 0;
    for (;;) {
      attempt++;
      try {
        if (stopping.signal.aborted) throw new DeliveryError('the service is stopping', false);
        await channel.send(message, stopping.signal);
        record('alert-sent', alert, { ...about, attempts: attempt });
        return;
      } catch (error) {
        const e = error instanceof DeliveryError ? error : new DeliveryError((error as Error)?.message ?? String(error), true, { cause: error });
        const stoppingNow = stopping.signal.aborted;
        if (!e.retry || attempt > channel.retries || stoppingNow) {
          const why = stoppingNow ? `${e.message}; given up: the service is stopping` : e.message;
          record('alert-failed', alert, { ...about, attempts: attempt, error: why });
          log(`alerts: ${channel.kind} to ${channel.to} failed after ${attempt} attempt${attempt === 1 ? '' : 's'} (${why}): ${message.text}`, 'error');
          return;
        }
        const wait = backoffDelay(attempt, retryBackoff);
        log(`alerts: ${channel.kind} to ${channel.to} failed (${e.message}); trying again in ${(wait / 1000).toFixed(1)} s`, 'warn');
        await sleep(wait, stopping.signal);
      }
    }
  }

  function dispatch(alert: Alert): void {
    for (const channel of channels) {
      if (!channel.rules.includes(alert.rule)) continue;
      const message = alertMessage(alert, site, randomUUID());
      if (pending.size >= maxPending) {
        record('alert-failed', alert, { channel: channel.kind, to: channel.to, rule: alert.rule, phase: alert.phase, message: message.id, text: message.text, attempts: 0, error: `more than ${maxPending} alerts waiting; this one was dropped` });
        continue;
      }
      const p = deliver(channel, alert, message).finally(() => pending.delete(p));
      pending.add(p);
    }
  }

  function check(): void {
    if (stopped) return;
    let cameras: readonly ObservedCamera[];
    try {
      cameras = observe();
    } catch (error) {
      log(`alerts: could not read the live view (${(error as Error).message})`, 'error');
      return;
    }
    const result = evaluateAlerts(state, { time: clock(), cameras }, { quietMs: settings.quietMs, rules: settings.rules });
    state = result.state;
    for (const alert of result.alerts) dispatch(alert);
  }

  const timer = setInterval(check, checkMs);
  timer.unref();
  return {
    check,
    get pending() {
      return pending.size;
    },
    async idle() {
      while (pending.size > 0) await Promise.allSettled([...pending]);
    },
    async stop() {
      if (stopped) return;
      stopped = true;
      clearInterval(timer);
      stopping.abort();
      mail?.close();
      while (pending.size > 0) await Promise.allSettled([...pending]);
    },
  };
}

/** Waits `ms`, or less when the signal aborts. */
function sleep(ms: number, signal: AbortSignal): Promise<void> {
  return new Promise((done) => {
    if (signal.aborted) return done();
    const timer = setTimeout(finish, ms);
    function finish() {
      clearTimeout(timer);
      signal.removeEventListener('abort', finish);
      done();
    }
    signal.addEventListener('abort', finish, { once: true });
  });
}

/** `work`, or a DeliveryError as soon as the signal aborts (an SMTP exchange cannot be cancelled half-way; it is left to time out). */
function untilAborted(work: Promise<void>, signal: AbortSignal): Promise<void> {
  if (signal.aborted) return Promise.reject(new DeliveryError('the service is stopping', false));
  return new Promise((done, fail) => {
    const abort = () => fail(new DeliveryError('the service is stopping', false));
    signal.addEventListener('abort', abort, { once: true });
    work.then(done, fail).finally(() => signal.removeEventListener('abort', abort));
  });
}
