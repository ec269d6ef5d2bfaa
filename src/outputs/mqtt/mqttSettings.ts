import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { ConfigError } from '../../config/ConfigError.ts';
import { readSecret } from '../../config/readSecret.ts';
import { bool, int, mapping, num, show, text, type Fail } from '../../config/settingFields.ts';
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

const COMMON_KEYS = ['url', 'topicPrefix', 'qos', 'username', 'password', 'clientId', 'tls'];
const COLLECTOR_KEYS = ['sessionExpirySeconds'];
const PUBLISHER_KEYS = ['site', 'queueLimit', 'stateIntervalSeconds', 'stateRefreshSeconds', 'lowFill', 'discovery', 'discoveryPrefix'];
const TLS_KEYS = ['ca', 'cert', 'key', 'rejectUnauthorized'];
const PROTOCOLS = ['mqtt:', 'mqtts:', 'ws:', 'wss:'];

/** MQTT client identifiers we accept: 1..128 of letters, digits, `.`, `_`, `:`, `-`. */
const CLIENT_ID_PATTERN = /^[A-Za-z0-9._:-]{1,128}$/;

/**
 * Validates a parsed `mqtt` section; returns it with defaults filled in and TLS paths resolved.
 * Throws {@link ConfigError} naming the file and field. Unknown keys are errors, as everywhere in
 * the configuration.
 *
 * Example: `validateMqttSettings({ url: 'mqtt://127.0.0.1:1883' })` →
 * `{ url: 'mqtt://127.0.0.1:1883', topicPrefix: 'residuum', qos: 1, queueLimit: 10000, … }`.
 */
export function validateMqttSettings(raw: unknown, options: ValidateMqttSettingsOptions = {}): MqttSettings {
  const { file = 'config', base = '.', env = process.env, at = 'mqtt', role = MqttRole.publisher } = options;
  const fail = (path: string, message: string): never => {
    throw new ConfigError(`${file}: ${path} ${message}`);
  };
  const keys = role === MqttRole.publisher ? [...COMMON_KEYS, ...PUBLISHER_KEYS] : [...COMMON_KEYS, ...COLLECTOR_KEYS];
  const m = mapping(raw, at, keys, fail);

  const url = brokerUrl(m.url, `${at}.url`, fail);
  const topicPrefix = prefix(m.topicPrefix ?? 'residuum', `${at}.topicPrefix`, fail);
  const qos = m.qos ?? 1;
  if (qos !== 0 && qos !== 1 && qos !== 2) fail(`${at}.qos`, `must be 0, 1 or 2, got ${show(qos)}`);
  const username = m.username === undefined ? undefined : text(m.username, `${at}.username`, fail);
  // Text, { env: NAME } or { file: path }; a password file others may read is refused.
  const password = m.password === undefined ? undefined : readSecret(m.password, `${at}.password`, fail, { base, env, privateFile: true });
  // MQTT 3.1.1 §3.1.2.9 (recalled from memory): the password flag must be 0 when the user name flag is 0.
  if (password !== undefined && username === undefined) fail(`${at}.password`, `needs ${at}.username as well (MQTT sends a password only with a user name)`);
  let clientId: string | undefined;
  if (m.clientId !== undefined) {
    if (typeof m.clientId !== 'string' || !CLIENT_ID_PATTERN.test(m.clientId)) {
      fail(`${at}.clientId`, `must be 1–128 letters, digits, ".", "_", ":" or "-", got ${show(m.clientId)}`);
    }
    clientId = m.clientId as string;
  }
  let tls: MqttTlsSettings | undefined;
  if (m.tls !== undefined) {
    const protocol = new URL(url).protocol;
    if (protocol !== 'mqtts:' && protocol !== 'wss:') fail(`${at}.tls`, `needs a mqtts: or wss: url, but ${at}.url is ${protocol}`);
    const t = mapping(m.tls, `${at}.tls`, TLS_KEYS, fail);
    const path = (key: string) => (t[key] === undefined ? undefined : resolve(base, text(t[key], `${at}.tls.${key}`, fail)));
    const rejectUnauthorized = t.rejectUnauthorized ?? true;
    if (typeof rejectUnauthorized !== 'boolean') fail(`${at}.tls.rejectUnauthorized`, `must be true or false, got ${show(rejectUnauthorized)}`);
    const cert = path('cert');
    const key = path('key');
    if ((cert === undefined) !== (key === undefined)) fail(`${at}.tls.${cert === undefined ? 'cert' : 'key'}`, `is needed too: a client certificate goes with its key`);
    const ca = path('ca');
    tls = { ...(ca !== undefined && { ca }), ...(cert !== undefined && { cert, key }), rejectUnauthorized: rejectUnauthorized as boolean };
  }
  let site: string | undefined;
  if (m.site !== undefined) {
    if (typeof m.site !== 'string' || !SITE_ID_PATTERN.test(m.site)) {
      fail(`${at}.site`, `must be 1–32 letters and digits, with single "-" or "_" between them, got ${show(m.site)}`);
    }
    site = m.site as string;
  }
  return {
    url,
    topicPrefix,
    qos: qos as MqttQos,
    ...(username !== undefined && { username }),
    ...(password !== undefined && { password }),
    ...(clientId !== undefined && { clientId }),
    ...(tls !== undefined && { tls }),
    ...(site !== undefined && { site }),
    ...(m.sessionExpirySeconds !== undefined && { sessionExpirySeconds: int(m.sessionExpirySeconds, `${at}.sessionExpirySeconds`, 1, 4_294_967_295, fail) }),
    queueLimit: int(m.queueLimit ?? 10_000, `${at}.queueLimit`, 1, 1_000_000, fail),
    stateIntervalSeconds: num(m.stateIntervalSeconds ?? 1, `${at}.stateIntervalSeconds`, 0, 3600, fail),
    stateRefreshSeconds: num(m.stateRefreshSeconds ?? 60, `${at}.stateRefreshSeconds`, 1, 86_400, fail),
    lowFill: num(m.lowFill ?? 0.2, `${at}.lowFill`, 0, 1, fail),
    discovery: bool(m.discovery ?? false, `${at}.discovery`, fail),
    discoveryPrefix: prefix(m.discoveryPrefix ?? 'homeassistant', `${at}.discoveryPrefix`, fail),
  };
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

function brokerUrl(v: unknown, at: string, fail: Fail): string {
  if (typeof v !== 'string' || v === '') return fail(at, `must be the broker's URL, e.g. mqtt://127.0.0.1:1883, got ${show(v)}`);
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

function prefix(v: unknown, at: string, fail: Fail): string {
  if (typeof v !== 'string' || v.length === 0 || v.length > 200) return fail(at, `must be 1–200 characters, got ${show(v)}`);
  // MQTT 3.1.1 §4.7 (recalled from memory): + and # are wildcards, never part of a topic name;
  // topics starting with $ are the broker's own ($SYS); a NUL is not allowed in any topic.
  if (/[+#\u0000]/.test(v)) fail(at, `must not contain "+", "#" or NUL (MQTT wildcards), got ${show(v)}`);
  if (v.startsWith('$')) fail(at, `must not start with "$" (topics for the broker's own use), got ${show(v)}`);
  if (v.split('/').some((level) => level === '')) fail(at, `must not have empty levels (a leading, trailing or double "/"), got ${show(v)}`);
  return v;
}
