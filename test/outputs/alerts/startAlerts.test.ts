import { createHmac, timingSafeEqual } from 'node:crypto';
import { afterEach, describe, expect, it } from 'vitest';
import type { AlertMessage } from '../../../src/outputs/alerts/alertMessage.ts';
import { validateAlertSettings } from '../../../src/outputs/alerts/alertSettings.ts';
import type { ObservedCamera } from '../../../src/outputs/alerts/evaluateAlerts.ts';
import { signBody } from '../../../src/outputs/alerts/sendWebhook.ts';
import { startAlerts, type AlertService } from '../../../src/outputs/alerts/startAlerts.ts';
import { liveView } from '../../../src/server/liveView.ts';
import { openStore, type Store } from '../../../src/store/index.ts';
import { waitUntil } from '../../service/waitUntil.ts';
import { startSmtpServer, startWebhookReceiver, type WebhookReceiver } from './receivers.ts';

// Alerts delivered to a local HTTP receiver and a local SMTP server (the smtp-server package),
// from a live view we set by hand (our invented "Main hall" with capacity 10).

let count = 0;
let offline = false;
const observe = (): readonly ObservedCamera[] =>
  liveView(
    [{ camera: 'hall', name: 'Main hall', state: offline ? 'offline' : 'online', viewChanged: false, lastFrameAt: Date.now(), ...(offline && { reason: 'HTTP 500 from the camera' }), zones: [{ id: 'floor', name: 'Floor', kind: 'room', count, fill: 0.2, capacity: 10 }] }],
  ).cameras;

const cleanup: (() => Promise<void> | void)[] = [];
afterEach(async () => {
  for (const c of cleanup.splice(0).reverse()) await c();
  count = 0;
  offline = false;
});

function store(): Store {
  const s = openStore(':memory:', { timeZone: 'UTC' });
  s.upsertCamera({ id: 'hall', name: 'Main hall' });
  s.upsertZone('hall', { id: 'floor', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] });
  cleanup.push(() => s.close());
  return s;
}

async function receiver(): Promise<WebhookReceiver> {
  const r = await startWebhookReceiver();
  cleanup.push(() => r.close());
  return r;
}

function alerts(options: Parameters<typeof startAlerts>[0]): AlertService {
  const a = startAlerts(options);
  cleanup.push(() => a.stop());
  return a;
}

describe('webhook signature', () => {
  it('is the HMAC-SHA256 of the body', () => {
    // check: RFC 4231 test case 2 (key "Jefe"), HMAC-SHA-256 value (recalled from memory).
    expect(signBody('what do ya want for nothing?', 'Jefe')).toBe('sha256=5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843');
  });
});

describe('startAlerts', () => {
  it('posts one signed message per event to a webhook, and records it as an event', async () => {
    const hook = await receiver();
    const s = store();
    const settings = validateAlertSettings({ quietSeconds: 3600, webhooks: [{ url: hook.url, secret: { env: 'TEST_HOOK_SECRET' } }] }, { env: { TEST_HOOK_SECRET: 's3cret-for-tests' } });
    const a = alerts({ settings, site: 'Test site', observe, events: s, checkMs: 60_000 });
    // Over, within, over, within, … ten times: one event.
    for (let i = 0; i < 10; i++) {
      count = i % 2 === 0 ? 12 : 9;
      a.check();
    }
    await a.idle();
    expect(hook.received).toHaveLength(1);
    const { headers, body } = hook.received[0];
    expect(headers['content-type']).toBe('application/json; charset=utf-8');
    // check: Node's crypto HMAC over the raw body the receiver got, compared in constant time.
    const expected = Buffer.from(`sha256=${createHmac('sha256', 's3cret-for-tests').update(body).digest('hex')}`);
    const got = Buffer.from(String(headers['x-residuum-signature']));
    expect(got.length === expected.length && timingSafeEqual(got, expected)).toBe(true);
    const message = JSON.parse(body) as AlertMessage;
    expect(message).toMatchObject({ format: 'residuum-alert/1', site: 'Test site', rule: 'over-capacity', phase: 'started', camera: 'hall', zone: 'floor', figures: { count: 12, capacity: 10 } });
    expect(message.text).toBe('Floor (Main hall): 12 people, more than its capacity of 10.');
    expect(message.caution).toMatch(/not a life-safety/);
    expect(new Date(message.since).toISOString()).toBe(message.since);
    const sent = s.listEvents({ type: 'alert-sent' });
    expect(sent).toHaveLength(1);
    expect(sent[0]).toMatchObject({ camera: 'hall', zone: 'floor', detail: { channel: 'webhook', to: hook.url, rule: 'over-capacity', phase: 'started', attempts: 1, message: message.id } });
    // The secret is in no event.
    expect(JSON.stringify(s.listEvents())).not.toContain('s3cret');
  });

  it('retries a failing webhook with backoff and sends the message once it answers', async () => {
    const hook = await receiver();
    hook.answer = (i) => (i < 2 ? 503 : 204);
    const s = store();
    const lines: string[] = [];
    const settings = validateAlertSettings({ webhooks: [{ url: hook.url, retries: 3 }] });
    const a = alerts({ settings, site: 'Test site', observe, events: s, checkMs: 60_000, retryBackoff: { initialMs: 20, maxMs: 50 }, log: (l) => lines.push(l) });
    offline = true;
    a.check();
    await a.idle();
    expect(hook.received).toHaveLength(3);
    // The same message each time (one id): a receiver can drop a copy.
    expect(new Set(hook.received.map((r) => (JSON.parse(r.body) as AlertMessage).id)).size).toBe(1);
    expect(JSON.parse(hook.received[2].body)).toMatchObject({ rule: 'camera-offline', phase: 'started', figures: { reason: 'HTTP 500 from the camera' } });
    expect(s.listEvents({ type: 'alert-sent' }).map((e) => (e.detail as { attempts: number }).attempts)).toEqual([3]);
    expect(s.listEvents({ type: 'alert-failed' })).toEqual([]);
    expect(lines.filter((l) => l.includes('HTTP 503'))).toHaveLength(2);
  });

  it('gives up after the retries, or at once when the receiver refuses the message, and records the failure', async () => {
    const hook = await receiver();
    hook.answer = () => 500;
    const s = store();
    const settings = validateAlertSettings({ webhooks: [{ url: hook.url, retries: 2 }] });
    const a = alerts({ settings, site: 'Test site', observe, events: s, checkMs: 60_000, retryBackoff: { initialMs: 10, maxMs: 20 } });
    count = 11;
    a.check();
    await a.idle();
    expect(hook.received).toHaveLength(3);
    expect(s.listEvents({ type: 'alert-failed' })).toMatchObject([{ camera: 'hall', zone: 'floor', detail: { channel: 'webhook', attempts: 3, error: expect.stringContaining('HTTP 500') } }]);

    // 400: the receiver does not want it; trying again would not help (common practice: retry 408, 429, 5xx only).
    hook.answer = () => 400;
    offline = true;
    a.check();
    await a.idle();
    expect(hook.received).toHaveLength(4);
    expect(s.listEvents({ type: 'alert-failed' }).map((e) => (e.detail as { attempts: number }).attempts)).toEqual([3, 1]);
  });

  it('does not follow a redirect, and does not try it again', async () => {
    const hook = await receiver();
    hook.answer = () => 302;
    const s = store();
    const a = alerts({ settings: validateAlertSettings({ webhooks: [{ url: hook.url }] }), site: 'Test site', observe, events: s, checkMs: 60_000, retryBackoff: { initialMs: 10, maxMs: 20 } });
    count = 11;
    a.check();
    await a.idle();
    expect(hook.received).toHaveLength(1);
    expect(s.listEvents({ type: 'alert-failed' })).toMatchObject([{ detail: { attempts: 1, error: expect.stringMatching(/HTTP 302/) } }]);
  });

  it('never blocks: a receiver that does not answer leaves the checks running and other channels delivering', async () => {
    const slow = await receiver();
    slow.answer = () => 'hang';
    const fast = await receiver();
    const s = store();
    const settings = validateAlertSettings({ webhooks: [{ url: slow.url, timeoutSeconds: 60 }, { url: fast.url }] });
    const a = alerts({ settings, site: 'Test site', observe, events: s, checkMs: 60_000 });
    count = 11;
    a.check();
    await waitUntil(() => fast.received.length === 1 && slow.received.length === 1, { what: 'both receivers reached', timeoutMs: 10_000, intervalMs: 20 });
    offline = true;
    a.check(); // returns at once although the slow receiver still holds the first message
    await waitUntil(() => fast.received.length === 2, { what: 'the second alert at the fast receiver', timeoutMs: 10_000, intervalMs: 20 });
    expect(a.pending).toBeGreaterThanOrEqual(1);
    // Stopping gives up what is still under way, and says so.
    await a.stop();
    expect(a.pending).toBe(0);
    const failed = s.listEvents({ type: 'alert-failed' });
    expect(failed.length).toBeGreaterThanOrEqual(1);
    expect(failed.every((e) => /stopping/.test((e.detail as { error: string }).error))).toBe(true);
  });

  it('sends one e-mail per event through SMTP with STARTTLS and a password from a file', async () => {
    const { mkdtempSync, writeFileSync, rmSync } = await import('node:fs');
    const { tmpdir } = await import('node:os');
    const { join } = await import('node:path');
    const dir = mkdtempSync(join(tmpdir(), 'residuum-alerts-'));
    cleanup.push(() => rmSync(dir, { recursive: true, force: true }));
    writeFileSync(join(dir, 'smtp-password'), 'mail-pass-for-tests\n');
    const smtp = await startSmtpServer({ login: { user: 'alerts', pass: 'mail-pass-for-tests' } });
    cleanup.push(() => smtp.close());
    const s = store();
    const settings = validateAlertSettings(
      {
        quietSeconds: 0,
        email: {
          // smtp-server's own certificate is self-signed: not verified here, as a test set-up only.
          smtp: { host: '127.0.0.1', port: smtp.port, security: 'starttls', username: 'alerts', password: { file: 'smtp-password' }, rejectUnauthorized: false },
          from: 'Residuum <alerts@example.org>',
          to: ['facilities@example.org', 'Front desk <desk@example.org>'],
        },
      },
      { base: dir },
    );
    const a = alerts({ settings, site: 'Test site', observe, events: s, checkMs: 60_000 });
    offline = true;
    a.check();
    a.check();
    await a.idle();
    offline = false;
    a.check(); // quiet period 0: the end at once
    await a.idle();
    expect(smtp.mails).toHaveLength(2);
    const [start, end] = smtp.mails;
    expect(start.user).toBe('alerts');
    expect(start.from).toBe('alerts@example.org');
    expect(start.to).toEqual(['facilities@example.org', 'desk@example.org']);
    expect(start.subject).toBe('Camera Main hall is offline (HTTP 500 from the camera): its zones are not being counted.');
    expect(start.raw).toMatch(/Counts are estimates/);
    expect(end.subject).toMatch(/^Ended: Camera Main hall is back online and counting after \d+ s offline\.$/);
    expect(s.listEvents({ type: 'alert-sent' }).map((e) => (e.detail as { channel: string; phase: string }).channel + '/' + (e.detail as { phase: string }).phase)).toEqual(['email/started', 'email/ended']);
  });

  it('records a refused SMTP login as failed without retrying', async () => {
    const smtp = await startSmtpServer({ login: { user: 'alerts', pass: 'right' } });
    cleanup.push(() => smtp.close());
    const s = store();
    const settings = validateAlertSettings({
      email: { smtp: { host: '127.0.0.1', port: smtp.port, username: 'alerts', password: 'wrong', rejectUnauthorized: false }, from: 'alerts@example.org', to: 'facilities@example.org', retries: 3 },
    });
    const a = alerts({ settings, site: 'Test site', observe, events: s, checkMs: 60_000, retryBackoff: { initialMs: 10, maxMs: 20 } });
    count = 11;
    a.check();
    await a.idle();
    expect(smtp.mails).toHaveLength(0);
    const failed = s.listEvents({ type: 'alert-failed' });
    expect(failed).toHaveLength(1);
    expect(failed[0].detail).toMatchObject({ channel: 'email', attempts: 1, error: expect.stringMatching(/^SMTP 127\.0\.0\.1: /) });
    expect(JSON.stringify(failed)).not.toContain('wrong');
  });
});
