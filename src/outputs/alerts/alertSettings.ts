import { ConfigError } from '../../config/ConfigError.ts';
import { readSecret } from '../../config/readSecret.ts';
import { int, mapping, num, show, text, type Fail } from '../../config/settingFields.ts';
import { ALERT_RULES, type AlertRule } from './evaluateAlerts.ts';

/**
 * The `alerts` section of the configuration: where alerts go (webhooks, e-mail) and the quiet
 * period that makes one event one message.
 *
 * ```yaml
 * alerts:
 *   quietSeconds: 300                 # an event ends once its condition stayed away this long; default 300
 *   rules: [over-capacity, low-stock, camera-offline]   # default all
 *   webhooks:
 *     - url: https://hooks.example.org/residuum
 *       secret: { env: RESIDUUM_WEBHOOK_SECRET }       # optional: HMAC-SHA256 signature header
 *       rules: [camera-offline]                        # optional: a subset of alerts.rules
 *       timeoutSeconds: 10                             # default 10
 *       retries: 5                                     # default 5, 0..20
 *   email:
 *     smtp:
 *       host: smtp.example.org
 *       port: 587                     # default 587 (starttls, none) or 465 (tls)
 *       security: starttls            # starttls (default), tls, or none (a local relay; no password then)
 *       username: alerts@example.org
 *       password: { file: /run/secrets/smtp-password }
 *       rejectUnauthorized: true      # default true: refuse a server whose certificate does not verify
 *     from: "Residuum <alerts@example.org>"
 *     to: [facilities@example.org]
 *     rules: [over-capacity, camera-offline]
 *     retries: 5
 * ```
 *
 * A secret (`password`, `secret`) is text, `{ env: NAME }` (an environment variable) or
 * `{ file: path }` (a file's content without its final line break, the path resolved against the
 * configuration file's folder); it is read when the configuration is validated, so a missing one
 * stops the start with a message naming the field, and it never appears in a message or log.
 */

export const SmtpSecurity = { starttls: 'starttls', tls: 'tls', none: 'none' } as const;
export type SmtpSecurity = (typeof SmtpSecurity)[keyof typeof SmtpSecurity];

export interface WebhookSettings {
  /** http: or https: URL the alert is POSTed to. */
  readonly url: string;
  /** Shared secret: each request carries `X-Residuum-Signature: sha256=<hex HMAC-SHA256 of the body>`. */
  readonly secret?: string;
  /** Alerts sent here; a subset of the section's rules. */
  readonly rules: readonly AlertRule[];
  /** One attempt may take this long, ms; 1 000..120 000, default 10 000. */
  readonly timeoutMs: number;
  /** Attempts after the first one fails, 0..20; default 5 (delays 1 s doubling to 60 s, full jitter). */
  readonly retries: number;
}

export interface SmtpSettings {
  readonly host: string;
  readonly port: number;
  readonly security: SmtpSecurity;
  readonly username?: string;
  readonly password?: string;
  readonly rejectUnauthorized: boolean;
  /** One connection and message may take this long, ms; default 30 000. */
  readonly timeoutMs: number;
}

export interface EmailSettings {
  readonly smtp: SmtpSettings;
  readonly from: string;
  readonly to: readonly string[];
  readonly rules: readonly AlertRule[];
  readonly retries: number;
}

export interface AlertSettings {
  /** ms ≥ 0; see evaluateAlerts. */
  readonly quietMs: number;
  readonly rules: readonly AlertRule[];
  readonly webhooks: readonly WebhookSettings[];
  readonly email?: EmailSettings;
}

export interface ValidateAlertSettingsOptions {
  /** The configuration file, for messages; default `config`. */
  readonly file?: string;
  /** Folder that secret files are resolved against; default the current folder. */
  readonly base?: string;
  /** Where `{ env: NAME }` secrets are read; default process.env. */
  readonly env?: Readonly<Record<string, string | undefined>>;
}

/**
 * Validates a parsed `alerts` section (defaults filled in, secrets read); throws ConfigError naming
 * the file and field, e.g. `site.yaml: alerts.webhooks[0].url must be an http: or https: URL, got "ftp://x"`.
 */
export function validateAlertSettings(raw: unknown, options: ValidateAlertSettingsOptions = {}): AlertSettings {
  const { file = 'config', base = '.', env = process.env } = options;
  const fail: Fail = (path, message) => {
    throw new ConfigError(`${file}: ${path} ${message}`);
  };
  const a = mapping(raw, 'alerts', ['quietSeconds', 'rules', 'webhooks', 'email'], fail);
  const quietSeconds = num(a.quietSeconds ?? 300, 'alerts.quietSeconds', 0, 86_400, fail);
  const rules = ruleList(a.rules ?? ALERT_RULES, 'alerts.rules', ALERT_RULES, fail);
  const secret = (v: unknown, at: string) => readSecret(v, at, fail, { base, env });

  const hooksRaw = a.webhooks ?? [];
  if (!Array.isArray(hooksRaw)) fail('alerts.webhooks', 'must be a list of webhooks ({ url, secret, … })');
  if ((hooksRaw as unknown[]).length > 20) fail('alerts.webhooks', 'must have at most 20 webhooks');
  const webhooks = (hooksRaw as unknown[]).map((h, i): WebhookSettings => {
    const at = `alerts.webhooks[${i}]`;
    const w = mapping(h, at, ['url', 'secret', 'rules', 'timeoutSeconds', 'retries'], fail);
    const url = httpUrl(w.url, `${at}.url`, fail);
    const s = w.secret === undefined ? undefined : secret(w.secret, `${at}.secret`);
    return {
      url,
      ...(s !== undefined && { secret: s }),
      rules: w.rules === undefined ? rules : ruleList(w.rules, `${at}.rules`, rules, fail),
      timeoutMs: num(w.timeoutSeconds ?? 10, `${at}.timeoutSeconds`, 1, 120, fail) * 1000,
      retries: int(w.retries ?? 5, `${at}.retries`, 0, 20, fail),
    };
  });

  let email: EmailSettings | undefined;
  if (a.email !== undefined) {
    const e = mapping(a.email, 'alerts.email', ['smtp', 'from', 'to', 'rules', 'retries'], fail);
    const s = mapping(e.smtp, 'alerts.email.smtp', ['host', 'port', 'security', 'username', 'password', 'rejectUnauthorized', 'timeoutSeconds'], fail);
    const host = text(s.host, 'alerts.email.smtp.host', fail);
    const security = s.security ?? SmtpSecurity.starttls;
    if (!Object.values(SmtpSecurity).includes(security as SmtpSecurity)) fail('alerts.email.smtp.security', `must be starttls, tls or none, got ${show(security)}`);
    const port = int(s.port ?? (security === SmtpSecurity.tls ? 465 : 587), 'alerts.email.smtp.port', 1, 65535, fail);
    const username = s.username === undefined ? undefined : text(s.username, 'alerts.email.smtp.username', fail);
    const password = s.password === undefined ? undefined : secret(s.password, 'alerts.email.smtp.password');
    if (password !== undefined && username === undefined) fail('alerts.email.smtp.password', 'needs alerts.email.smtp.username as well');
    if (password !== undefined && security === SmtpSecurity.none) fail('alerts.email.smtp.password', 'is never sent over an unencrypted connection: use security starttls or tls');
    const rejectUnauthorized = s.rejectUnauthorized ?? true;
    if (typeof rejectUnauthorized !== 'boolean') fail('alerts.email.smtp.rejectUnauthorized', `must be true or false, got ${show(rejectUnauthorized)}`);
    const toRaw = typeof e.to === 'string' ? [e.to] : e.to;
    if (!Array.isArray(toRaw) || toRaw.length === 0 || toRaw.length > 50) fail('alerts.email.to', 'must be one address or a list of 1 to 50 addresses');
    const to = (toRaw as unknown[]).map((v, i) => address(v, `alerts.email.to[${i}]`, fail));
    email = {
      smtp: {
        host,
        port,
        security: security as SmtpSecurity,
        ...(username !== undefined && { username }),
        ...(password !== undefined && { password }),
        rejectUnauthorized: rejectUnauthorized as boolean,
        timeoutMs: num(s.timeoutSeconds ?? 30, 'alerts.email.smtp.timeoutSeconds', 1, 300, fail) * 1000,
      },
      from: address(e.from, 'alerts.email.from', fail),
      to,
      rules: e.rules === undefined ? rules : ruleList(e.rules, 'alerts.email.rules', rules, fail),
      retries: int(e.retries ?? 5, 'alerts.email.retries', 0, 20, fail),
    };
  }
  if (webhooks.length === 0 && email === undefined) fail('alerts', 'needs at least one webhook (alerts.webhooks) or alerts.email');
  return { quietMs: quietSeconds * 1000, rules, webhooks, ...(email && { email }) };
}

function ruleList(v: unknown, at: string, allowed: readonly AlertRule[], fail: Fail): AlertRule[] {
  if (!Array.isArray(v) || v.length === 0) return fail(at, `must be a list of one or more of ${allowed.join(', ')}`);
  const out: AlertRule[] = [];
  v.forEach((r, i) => {
    if (typeof r !== 'string' || !(allowed as readonly string[]).includes(r)) fail(`${at}[${i}]`, `must be one of ${allowed.join(', ')}, got ${show(r)}`);
    if (!out.includes(r as AlertRule)) out.push(r as AlertRule);
  });
  return out;
}

function httpUrl(v: unknown, at: string, fail: Fail): string {
  if (typeof v !== 'string' || v === '') return fail(at, `must be an http: or https: URL, got ${show(v)}`);
  let parsed: URL;
  try {
    parsed = new URL(v);
  } catch {
    return fail(at, 'must be an http: or https: URL');
  }
  if (parsed.protocol !== 'http:' && parsed.protocol !== 'https:') fail(at, `must be an http: or https: URL, got ${show(parsed.protocol)}`);
  // Checked before anything could echo it: credentials belong in `secret`, not in the URL.
  if (parsed.username !== '' || parsed.password !== '') fail(at, 'must not contain a user name or password; use secret for a shared secret');
  return v;
}

/** An e-mail address, optionally with a display name: `a@b.example` or `Name <a@b.example>`. */
function address(v: unknown, at: string, fail: Fail): string {
  if (typeof v !== 'string' || v.length > 320) return fail(at, `must be an e-mail address, got ${show(v)}`);
  const m = /^(?:[^<>\r\n]*<([^<>\s]+)>|([^<>\s]+))$/.exec(v.trim());
  const bare = m?.[1] ?? m?.[2];
  // Not RFC 5322 in full (common practice: one @, no spaces, a dot in the domain).
  if (!bare || !/^[^@\s]+@[^@\s]+\.[^@\s]+$/.test(bare)) fail(at, `must be an e-mail address such as facilities@example.org, got ${show(v)}`);
  return v.trim();
}
