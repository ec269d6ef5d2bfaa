import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { z } from 'zod';
import { ConfigError } from '../../config/ConfigError.ts';
import { secretSchema } from '../../config/readSecret.ts';
import { finiteNumber, flag, mapping, orDefault, parseOrThrow, runChecks, show, text, wholeNumber, type Fail } from '../../config/schemaFields.ts';
import { SITE_ID_PATTERN } from './topics.ts';

/**
 * The `mqtt` section of a configuration file: where to publish counts (`residuum run`) or where to
 * collect them from (`residuum collect`).
 *
 * ```yaml
 * mqtt:
 *   url: mqtts://broker.example.net:8883   # mqtt:, mqtts:, ws: or wss:; no user name or password in it
 *   topicPrefix: residuum                   # default residuum; topics are <prefix>/<site>/<camera>/...
 *   qos: 1                                  # 0, 1 or 2; default 1 (samples always go with at least 1)
 *   username: counter                       # optional; password needs a username (MQTT 3.1.1 §3.1.2.9)
 *   password: secret                        # or { env: MQTT_PASSWORD } or { file: /run/secrets/mqtt } (readable by this user only)
 *   clientId: riverside-counter             # optional; default residuum-<site>-<random> (collector: residuum-collector-<host>)
 *   tls: { ca: certs/ca.pem, cert: certs/client.pem, key: certs/client.key, rejectUnauthorized: true }
 *   site: riverside                         # publisher only: the site's topic level; default a slug of site.name
 *   queueLimit: 10000                       # publisher only: unsent samples kept in memory while the broker is away
 *   stateIntervalSeconds: 1                 # publisher only: at most one state message per zone this often
 *   stateRefreshSeconds: 60                 # publisher only: an unchanged state is sent again this often
 *   lowFill: 0.2                            # publisher only: a shelf below this fill is "low"
 *   sessionExpirySeconds: 604800            # collector only: MQTT 5 session kept this long while it is away (default: MQTT 3.1.1, broker's limit)
 *   discovery: true                         # publisher only: Home Assistant MQTT discovery messages (default false)
 *   discoveryPrefix: homeassistant          # publisher only: their topic prefix (default homeassistant)
 * ```
 *
 * Every message names the file and the field, as loadConfig does:
 * `site.yaml: mqtt.qos must be 0, 1 or 2, got 3`.
 */

/** Quality of service levels of MQTT 3.1.1 (§4.3): at most once, at least once, exactly once. */
export const MqttQos = { atMostOnce: 0, atLeastOnce: 1, exactlyOnce: 2 } as const;
export type MqttQos = (typeof MqttQos)[keyof typeof MqttQos];

/** Which program reads the section: the counting service publishes, the collector subscribes. */
export const MqttRole = { publisher: 'publisher', collector: 'collector' } as const;
export type MqttRole = (typeof MqttRole)[keyof typeof MqttRole];

export interface MqttTlsSettings {
  /** CA certificate file (PEM), resolved against the configuration file's folder; default the system's CAs. */
  readonly ca?: string;
  /** Client certificate file (PEM); needs `key`. */
  readonly cert?: string;
  /** Client private key file (PEM); needs `cert`. */
  readonly key?: string;
  /** Refuse a broker whose certificate does not verify; default true. */
  readonly rejectUnauthorized: boolean;
}

export interface MqttSettings {
  /** Broker URL: `mqtt:`, `mqtts:`, `ws:` or `wss:`, without credentials. */
  readonly url: string;
  /** First topic level(s); default `residuum`. */
  readonly topicPrefix: string;
  /** QoS of state and event messages; samples use max(1, qos). Default 1. */
  readonly qos: MqttQos;
  readonly username?: string;
  readonly password?: string;
  /** MQTT client identifier; default chosen by the publisher or collector. */
  readonly clientId?: string;
  /** Only with `mqtts:` or `wss:`. */
  readonly tls?: MqttTlsSettings;
  /** Publisher: the site's topic level (letters, digits, single `-` or `_` between them, ≤ 32); default a slug of site.name. */
  readonly site?: string;
  /** Publisher: most unsent samples kept in memory, 1..1 000 000 inclusive; default 10 000. The oldest go first. */
  readonly queueLimit: number;
  /** Publisher: least seconds between two state messages of one zone, 0..3600 inclusive; default 1. */
  readonly stateIntervalSeconds: number;
  /** Publisher: seconds after which an unchanged state is sent again, 1..86 400 inclusive; default 60. */
  readonly stateRefreshSeconds: number;
  /** Publisher: a shelf whose fill is below this is `low`, 0..1 inclusive; default 0.2. */
  readonly lowFill: number;
  /** Collector: MQTT 5 Session Expiry Interval, 1..4 294 967 295 s (clean start off); default none (MQTT 3.1.1, clean session off). */
  readonly sessionExpirySeconds?: number;
  /** Publisher: publish Home Assistant MQTT discovery messages (discovery.ts); default false. */
  readonly discovery: boolean;
  /** Publisher: the discovery topic prefix; default `homeassistant`. */
  readonly discoveryPrefix: string;
}

export interface ValidateMqttSettingsOptions {
  /** The configuration file, for messages; default `config`. */
  readonly file?: string;
  /** Folder that relative TLS file paths are resolved against; default the current folder. */
  readonly base?: string;
  /** Where `password: { env: NAME }` is read; default process.env. */
  readonly env?: Readonly<Record<string, string | undefined>>;
  /** Field path of the section; default `mqtt`. */
  readonly at?: string;
  /** `publisher` (default) accepts the publisher-only keys; `collector` refuses them. */
  readonly role?: MqttRole;
}

const PROTOCOLS = ['mqtt:', 'mqtts:', 'ws:', 'wss:'];

/** MQTT client identifiers we accept: 1..128 of letters, digits, `.`, `_`, `:`, `-`. */
const CLIENT_ID_PATTERN = /^[A-Za-z0-9._:-]{1,128}$/;

/**
 * The `mqtt` section as a zod schema (the one home of its shape, ranges and defaults): the parsed
 * value is {@link MqttSettings} with defaults filled in, TLS paths resolved against `base` and the
 * password read. The keys are the role's: a collector's section refuses the publisher-only keys
 * and the other way round.
 */
export function mqttSettingsSchema(options: Omit<ValidateMqttSettingsOptions, 'file'> = {}) {
  const { base = '.', env = process.env, at = 'mqtt', role = MqttRole.publisher } = options;
  const common = {
    url: z
      .string({ error: (issue) => `must be the broker's URL, e.g. mqtt://127.0.0.1:1883, got ${show(issue.input)}` })
      .min(1)
      .superRefine((v, ctx) => void runChecks(ctx, (fail) => brokerUrl(v, '', fail))),
    topicPrefix: orDefault(topicPrefix(), 'residuum'),
    qos: orDefault(z.literal([0, 1, 2], { error: (issue) => `must be 0, 1 or 2, got ${show(issue.input)}` }), 1),
    username: text().optional(),
    // Text, { env: NAME } or { file: path }; a password file others may read is refused.
    password: secretSchema({ base, env, privateFile: true }).optional(),
    clientId: z.string({ error: (issue) => `must be 1–128 letters, digits, ".", "_", ":" or "-", got ${show(issue.input)}` }).regex(CLIENT_ID_PATTERN).optional(),
    tls: mapping({ ca: text().optional(), cert: text().optional(), key: text().optional(), rejectUnauthorized: orDefault(flag(), true) })
      .transform((t, ctx): MqttTlsSettings => {
        const path = (key: 'ca' | 'cert' | 'key') => (t[key] === undefined ? undefined : resolve(base, t[key]));
        const [ca, cert, key] = [path('ca'), path('cert'), path('key')];
        if ((cert === undefined) !== (key === undefined)) {
          runChecks(ctx, (fail) => fail(`.${cert === undefined ? 'cert' : 'key'}`, 'is needed too: a client certificate goes with its key'));
          return z.NEVER;
        }
        return { ...(ca !== undefined && { ca }), ...(cert !== undefined && { cert, key }), rejectUnauthorized: t.rejectUnauthorized };
      })
      .optional(),
  };
  const publisher = {
    site: z.string({ error: (issue) => `must be 1–32 letters and digits, with single "-" or "_" between them, got ${show(issue.input)}` }).regex(SITE_ID_PATTERN).optional(),
    queueLimit: orDefault(wholeNumber(1, 1_000_000), 10_000),
    stateIntervalSeconds: orDefault(finiteNumber(0, 3600), 1),
    stateRefreshSeconds: orDefault(finiteNumber(1, 86_400), 60),
    lowFill: orDefault(finiteNumber(0, 1), 0.2),
    discovery: orDefault(flag(), false),
    discoveryPrefix: orDefault(topicPrefix(), 'homeassistant'),
  };
  const collector = {
    // MQTT 5.0 §3.1.2.11.2 (recalled from memory): a four-byte integer.
    sessionExpirySeconds: wholeNumber(1, 4_294_967_295).optional(),
  };
  // The publisher-only settings a collector leaves out still have their defaults (as before).
  const defaults = { queueLimit: 10_000, stateIntervalSeconds: 1, stateRefreshSeconds: 60, lowFill: 0.2, discovery: false, discoveryPrefix: 'homeassistant' };
  const section = role === MqttRole.publisher ? mapping({ ...common, ...publisher }) : mapping({ ...common, ...collector });
  return section.transform((m: Record<string, unknown>, ctx): MqttSettings => {
    const s = { ...defaults, ...m } as Omit<MqttSettings, 'qos'> & { qos: MqttQos };
    const checked = runChecks(ctx, (fail) => {
      // MQTT 3.1.1 §3.1.2.9 (recalled from memory): the password flag must be 0 when the user name flag is 0.
      if (s.password !== undefined && s.username === undefined) fail('.password', `needs ${at}.username as well (MQTT sends a password only with a user name)`);
      const protocol = new URL(s.url).protocol;
      if (s.tls !== undefined && protocol !== 'mqtts:' && protocol !== 'wss:') fail('.tls', `needs a mqtts: or wss: url, but ${at}.url is ${protocol}`);
      return true;
    });
    if (!checked) return z.NEVER;
    return {
      url: s.url,
      topicPrefix: s.topicPrefix,
      qos: s.qos,
      ...(s.username !== undefined && { username: s.username }),
      ...(s.password !== undefined && { password: s.password }),
      ...(s.clientId !== undefined && { clientId: s.clientId }),
      ...(s.tls !== undefined && { tls: s.tls }),
      ...(s.site !== undefined && { site: s.site }),
      ...(s.sessionExpirySeconds !== undefined && { sessionExpirySeconds: s.sessionExpirySeconds }),
      queueLimit: s.queueLimit,
      stateIntervalSeconds: s.stateIntervalSeconds,
      stateRefreshSeconds: s.stateRefreshSeconds,
      lowFill: s.lowFill,
      discovery: s.discovery,
      discoveryPrefix: s.discoveryPrefix,
    };
  });
}

/**
 * Validates a parsed `mqtt` section; returns it with defaults filled in and TLS paths resolved.
 * Throws {@link ConfigError} naming the file and field. Unknown keys are errors, as everywhere in
 * the configuration.
 *
 * Example: `validateMqttSettings({ url: 'mqtt://127.0.0.1:1883' })` →
 * `{ url: 'mqtt://127.0.0.1:1883', topicPrefix: 'residuum', qos: 1, queueLimit: 10000, … }`.
 */
export function validateMqttSettings(raw: unknown, options: ValidateMqttSettingsOptions = {}): MqttSettings {
  const { file = 'config', at = 'mqtt' } = options;
  return parseOrThrow(mqttSettingsSchema(options), raw, file, at);
}

/** TLS material read from the configured files, for the MQTT client. */
export interface MqttTlsMaterial {
  readonly ca?: Buffer;
  readonly cert?: Buffer;
  readonly key?: Buffer;
  readonly rejectUnauthorized: boolean;
}

/**
 * Reads the TLS files of validated settings; a file that cannot be read is a {@link ConfigError}
 * naming the field and the file (never its content). Undefined without a `tls` section.
 */
export function readMqttTls(settings: MqttSettings, at = 'mqtt'): MqttTlsMaterial | undefined {
  const { tls } = settings;
  if (tls === undefined) return undefined;
  const read = (key: 'ca' | 'cert' | 'key'): Buffer | undefined => {
    const path = tls[key];
    if (path === undefined) return undefined;
    try {
      return readFileSync(path);
    } catch (error) {
      const code = (error as NodeJS.ErrnoException).code;
      throw new ConfigError(`${at}.tls.${key}: cannot read ${path} (${code ?? (error as Error).message})`);
    }
  };
  const ca = read('ca');
  const cert = read('cert');
  const key = read('key');
  return { ...(ca && { ca }), ...(cert && { cert }), ...(key && { key }), rejectUnauthorized: tls.rejectUnauthorized };
}

function brokerUrl(v: string, at: string, fail: Fail): string {
  let parsed: URL;
  try {
    parsed = new URL(v);
  } catch {
    return fail(at, `must be a URL such as mqtt://broker.example.net:1883, got ${show(v)}`);
  }
  // Checked before anything echoes the URL, so that a password in it never reaches a message.
  if (parsed.username !== '' || parsed.password !== '') fail(at, 'must not contain a user name or password; put them in mqtt.username and mqtt.password');
  if (!PROTOCOLS.includes(parsed.protocol)) fail(at, `must start with ${PROTOCOLS.join(', ')}, got ${show(parsed.protocol)}`);
  if (parsed.hostname === '') fail(at, `must name a host, got ${show(v)}`);
  return v;
}

/** A topic prefix: 1..200 characters, no wildcard, not a broker's own topic, no empty level. */
function topicPrefix() {
  return z
    .string({ error: (issue) => `must be 1–200 characters, got ${show(issue.input)}` })
    .min(1)
    .max(200)
    .superRefine((v, ctx) => void runChecks(ctx, (fail) => prefixRules(v, '', fail)));
}

function prefixRules(v: string, at: string, fail: Fail): string {
  // MQTT 3.1.1 §4.7 (recalled from memory): + and # are wildcards, never part of a topic name;
  // topics starting with $ are the broker's own ($SYS); a NUL is not allowed in any topic.
  if (/[+#\u0000]/.test(v)) fail(at, `must not contain "+", "#" or NUL (MQTT wildcards), got ${show(v)}`);
  if (v.startsWith('$')) fail(at, `must not start with "$" (topics for the broker's own use), got ${show(v)}`);
  if (v.split('/').some((level) => level === '')) fail(at, `must not have empty levels (a leading, trailing or double "/"), got ${show(v)}`);
  return v;
}
