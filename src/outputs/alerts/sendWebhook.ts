import { createHmac } from 'node:crypto';
import { redactUrl } from '../../frames/live/httpGet.ts';
import type { AlertMessage } from './alertMessage.ts';
import { DeliveryError } from './deliveryError.ts';
import type { WebhookSettings } from './alertSettings.ts';

/** The header that carries the body's signature when the webhook has a secret. */
export const SIGNATURE_HEADER = 'X-Residuum-Signature';

/**
 * The signature of a webhook body: `sha256=` and the lower-case hex HMAC-SHA256 (RFC 2104,
 * FIPS 180-4) of the exact body bytes under the shared secret. A receiver recomputes it over the
 * raw body it got and compares in constant time.
 *
 * Example (RFC 4231 test case 2): signBody('what do ya want for nothing?', 'Jefe') =
 * 'sha256=5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843'.
 */
export function signBody(body: string, secret: string): string {
  return `sha256=${createHmac('sha256', secret).update(body, 'utf8').digest('hex')}`;
}

/**
 * One attempt: POSTs the message as JSON (UTF-8) to the webhook, with the signature header when it
 * has a secret, and waits at most `timeoutMs` for the answer. Any 2xx answer is success; the body
 * of the answer is read and dropped. A redirect is not followed (the signed body must not travel on
 * to another address unasked): a 3xx answer fails for good, like a 4xx.
 *
 * @throws DeliveryError: `retry` for a timeout, a network error, 408, 429 and 5xx; not for other answers.
 */
export async function sendWebhook(hook: Pick<WebhookSettings, 'url' | 'secret' | 'timeoutMs'>, message: AlertMessage, signal?: AbortSignal): Promise<{ status: number }> {
  const body = JSON.stringify(message);
  const headers: Record<string, string> = { 'content-type': 'application/json; charset=utf-8', 'user-agent': 'residuum' };
  if (hook.secret !== undefined) headers[SIGNATURE_HEADER.toLowerCase()] = signBody(body, hook.secret);
  const timeout = AbortSignal.timeout(hook.timeoutMs);
  let response: Response;
  try {
    response = await fetch(hook.url, { method: 'POST', headers, body, redirect: 'manual', signal: signal ? AbortSignal.any([signal, timeout]) : timeout });
  } catch (error) {
    const e = error as Error & { cause?: { code?: string; message?: string } };
    const why = timeout.aborted ? `no answer within ${hook.timeoutMs / 1000} s` : (e.cause?.code ?? e.cause?.message ?? e.message);
    throw new DeliveryError(`${redactUrl(hook.url)}: ${why}`, !signal?.aborted, { cause: error });
  }
  // Read and drop the answer, so that the connection can be reused or closed.
  await response.arrayBuffer().catch(() => undefined);
  if (response.status >= 200 && response.status < 300) return { status: response.status };
  const transient = response.status === 408 || response.status === 429 || response.status >= 500;
  throw new DeliveryError(`${redactUrl(hook.url)}: HTTP ${response.status}${response.statusText ? ` ${response.statusText}` : ''}`, transient);
}
