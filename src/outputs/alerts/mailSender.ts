import nodemailer from 'nodemailer';
import { alertMail, type AlertMessage } from './alertMessage.ts';
import type { EmailSettings } from './alertSettings.ts';
import { DeliveryError } from './deliveryError.ts';

/** Sends alert e-mails through one SMTP server (nodemailer). */
export interface MailSender {
  /** One attempt to send the message to every recipient; throws DeliveryError. */
  send(message: AlertMessage): Promise<void>;
  /** Closes the transport's connections. */
  close(): void;
}

/**
 * A mail sender for the `alerts.email` settings. `security`: `tls` connects with TLS from the
 * start (SMTP submission over TLS, RFC 8314, port 465); `starttls` requires the server to offer
 * STARTTLS (RFC 3207) and upgrades before anything else is sent (the password included); `none`
 * sends in the clear (a relay on the local network, without a password).
 *
 * The message is plain text (UTF-8): the sentence as subject, then the figures and the caution;
 * see alertMail.
 */
export function createMailSender(settings: EmailSettings): MailSender {
  const { smtp } = settings;
  const transport = nodemailer.createTransport({
    host: smtp.host,
    port: smtp.port,
    secure: smtp.security === 'tls',
    requireTLS: smtp.security === 'starttls',
    ignoreTLS: smtp.security === 'none',
    ...(smtp.username !== undefined && { auth: { user: smtp.username, pass: smtp.password ?? '' } }),
    tls: { rejectUnauthorized: smtp.rejectUnauthorized },
    connectionTimeout: smtp.timeoutMs,
    greetingTimeout: smtp.timeoutMs,
    socketTimeout: smtp.timeoutMs,
  });
  return {
    async send(message) {
      const { subject, text } = alertMail(message);
      try {
        await transport.sendMail({
          from: settings.from,
          to: [...settings.to],
          subject,
          text,
          // Lets a mail client thread the start and the end of one event; the id is unique per message.
          messageId: `<${message.id}@residuum.invalid>`,
          headers: { 'X-Residuum-Alert': `${message.rule}; ${message.phase}` },
        });
      } catch (error) {
        throw mailFailure(error, smtp.host);
      }
    },
    close() {
      transport.close();
    },
  };
}

/**
 * A DeliveryError for a nodemailer failure: an SMTP reply code 4xx is transient (RFC 5321 §4.2.1:
 * "transient negative completion"), 5xx permanent; connection problems and timeouts are transient;
 * a refused login is permanent (a wrong password does not heal by retrying).
 */
function mailFailure(error: unknown, host: string): DeliveryError {
  const e = error as { code?: string; responseCode?: number; response?: string; message?: string };
  const reply = typeof e.response === 'string' ? e.response.split('\n')[0].slice(0, 200) : undefined;
  const why = reply ?? e.message ?? String(error);
  if (typeof e.responseCode === 'number') {
    return new DeliveryError(`SMTP ${host}: ${why}`, e.responseCode >= 400 && e.responseCode < 500 && e.code !== 'EAUTH', { cause: error });
  }
  return new DeliveryError(`SMTP ${host}: ${why}${e.code ? ` (${e.code})` : ''}`, e.code !== 'EAUTH', { cause: error });
}
