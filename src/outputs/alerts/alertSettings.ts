import { z } from 'zod';
import { secretSchema } from '../../config/readSecret.ts';
import { finiteNumber, flag, mapping, oneOf, orDefault, parseOrThrow, runChecks, show, text, wholeNumber, type Fail } from '../../config/schemaFields.ts';
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

const RULES_SAID = (allowed: readonly string[]) => `a list of one or more of ${allowed.join(', ')}`;

/** A list of alert rules, each once (a repeated one is dropped). */
const ruleList = z
  .array(oneOf(ALERT_RULES as readonly AlertRule[] as [AlertRule, ...AlertRule[]]), { error: (issue) => (issue.code === 'invalid_type' || issue.code === 'too_small' ? `must be ${RULES_SAID(ALERT_RULES)}` : undefined) })
  .min(1)
  .transform((rules) => [...new Set(rules)]);

/**
 * The `alerts` section as a zod schema (the one home of its shape, ranges and defaults): the parsed
 * value is {@link AlertSettings}, defaults filled in, seconds turned into milliseconds, secrets read
 * (`{ env }` from `env`, `{ file }` against `base`).
 */
export function alertSettingsSchema(options: Omit<ValidateAlertSettingsOptions, 'file'> = {}) {
  const { base = '.', env = process.env } = options;
  const secret = secretSchema({ base, env }).optional();
  const webhook = mapping({
    url: z
      .string({ error: (issue) => `must be an http: or https: URL, got ${show(issue.input)}` })
      .min(1)
      .superRefine((v, ctx) => void runChecks(ctx, (fail) => httpUrl(v, '', fail))),
    secret,
    rules: ruleList.optional(),
    timeoutSeconds: orDefault(finiteNumber(1, 120), 10),
    retries: orDefault(wholeNumber(0, 20), 5),
  });
  const smtp = mapping({
    host: text(),
    port: z.preprocess((v) => (v === null ? undefined : v), wholeNumber(1, 65535).optional()),
    security: orDefault(oneOf(['starttls', 'tls', 'none'], 'starttls, tls or none'), SmtpSecurity.starttls),
    username: text().optional(),
    password: secret,
    rejectUnauthorized: orDefault(flag(), true),
    timeoutSeconds: orDefault(finiteNumber(1, 300), 30),
  }).transform((s, ctx): SmtpSettings => {
    const checked = runChecks(ctx, (fail) => {
      if (s.password !== undefined && s.username === undefined) fail('.password', 'needs alerts.email.smtp.username as well');
      if (s.password !== undefined && s.security === SmtpSecurity.none) fail('.password', 'is never sent over an unencrypted connection: use security starttls or tls');
      return true;
    });
    if (!checked) return z.NEVER;
    return {
      host: s.host,
      // RFC 8314 §7.3 (recalled from memory): 465 for submission over implicit TLS; 587 for submission (RFC 6409).
      port: s.port ?? (s.security === SmtpSecurity.tls ? 465 : 587),
      security: s.security,
      ...(s.username !== undefined && { username: s.username }),
      ...(s.password !== undefined && { password: s.password }),
      rejectUnauthorized: s.rejectUnauthorized,
      timeoutMs: s.timeoutSeconds * 1000,
    };
  });
  const addressText = z.string().max(320);
  const toSaid = 'must be one address or a list of 1 to 50 addresses';
  const email = mapping({
    smtp,
    from: z
      .string({ error: (issue) => `must be an e-mail address, got ${show(issue.input)}` })
      .max(320)
      .transform((v, ctx) => runChecks(ctx, (fail) => address(v, '', fail)) ?? z.NEVER),
    to: z
      .union([addressText, z.array(addressText, { error: () => toSaid }).min(1).max(50)], { error: () => toSaid })
      .transform((v, ctx) => runChecks(ctx, (fail) => (typeof v === 'string' ? [v] : v).map((a, i) => address(a, `[${i}]`, fail))) ?? z.NEVER),
    rules: ruleList.optional(),
    retries: orDefault(wholeNumber(0, 20), 5),
  });
  return mapping({
    quietSeconds: orDefault(finiteNumber(0, 86_400), 300),
    rules: orDefault(ruleList, [...ALERT_RULES]),
    webhooks: orDefault(z.array(webhook, { error: (issue) => ((issue.code as string) === 'too_big' ? 'must have at most 20 webhooks' : 'must be a list of webhooks ({ url, secret, … })') }).max(20), []),
    email: email.optional(),
  }).transform((a, ctx): AlertSettings => {
    const rules = a.rules as AlertRule[];
    // A webhook's or the e-mail's rules are a subset of the section's.
    const subset = (list: AlertRule[] | undefined, at: string, fail: Fail): AlertRule[] => {
      if (list === undefined) return rules;
      list.forEach((r, i) => {
        if (!rules.includes(r)) fail(`${at}.rules[${i}]`, `must be one of ${rules.join(', ')}, got ${show(r)}`);
      });
      return list;
    };
    return (
      runChecks(ctx, (fail) => {
        const webhooks = a.webhooks.map(
          (w, i): WebhookSettings => ({
            url: w.url,
            ...(w.secret !== undefined && { secret: w.secret }),
            rules: subset(w.rules, `.webhooks[${i}]`, fail),
            timeoutMs: w.timeoutSeconds * 1000,
            retries: w.retries,
          }),
        );
        const e = a.email;
        const email: EmailSettings | undefined = e && { smtp: e.smtp, from: e.from, to: e.to, rules: subset(e.rules, '.email', fail), retries: e.retries };
        if (webhooks.length === 0 && email === undefined) fail('', 'needs at least one webhook (alerts.webhooks) or alerts.email');
        return { quietMs: a.quietSeconds * 1000, rules, webhooks, ...(email && { email }) };
      }) ?? z.NEVER
    );
  });
}

/**
 * Validates a parsed `alerts` section (defaults filled in, secrets read); throws ConfigError naming
 * the file and field, e.g. `site.yaml: alerts.webhooks[0].url must be an http: or https: URL, got "ftp:"`.
 */
export function validateAlertSettings(raw: unknown, options: ValidateAlertSettingsOptions = {}): AlertSettings {
  return parseOrThrow(alertSettingsSchema(options), raw, options.file ?? 'config', 'alerts');
}

function httpUrl(v: string, at: string, fail: Fail): string {
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
function address(v: string, at: string, fail: Fail): string {
  const m = /^(?:[^<>\r\n]*<([^<>\s]+)>|([^<>\s]+))$/.exec(v.trim());
  const bare = m?.[1] ?? m?.[2];
  // Not RFC 5322 in full (common practice: one @, no spaces, a dot in the domain).
  if (!bare || !/^[^@\s]+@[^@\s]+\.[^@\s]+$/.test(bare)) fail(at, `must be an e-mail address such as facilities@example.org, got ${show(v)}`);
  return v.trim();
}
