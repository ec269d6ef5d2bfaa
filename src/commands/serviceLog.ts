import { pino, stdTimeFunctions, type Logger } from 'pino';
import { ConfigError } from '../config/ConfigError.ts';
import { LogLevel, type Log, type LogFields } from '../domain/log.ts';
import { UsageError } from './args.ts';

/**
 * The log of the long-running commands (run, demo, collect): one JSON object per line on standard
 * output, written by pino, e.g.
 *
 *   {"level":"warn","time":"2026-03-02T09:00:00.000Z","pid":4711,"hostname":"counter-1","camera":"door","msg":"camera door: offline (timeout)"}
 *
 * `level` is the level's name and `time` ISO 8601 in UTC (pino's `formatters.level` and
 * `stdTimeFunctions.isoTime`, see pino docs/api.md); `msg` is the whole line as the component
 * wrote it; `camera` and `component` come from its leading `camera <id>: ` or `<component>: `.
 * The `text` format prints the same records as `time LEVEL msg fields` for a person at a terminal.
 *
 * Keys never reach a line: fields named like a secret are redacted (pino's `redact`), and every
 * secret value the service knows (its admin key, new keys, MQTT, SMTP and database passwords,
 * webhook secrets; see {@link ServiceLog.hide}) is replaced by `[Redacted]` in whatever is written.
 */

/** The level below which lines are dropped: a {@link LogLevel} or `silent` (nothing). */
export type LogThreshold = LogLevel | 'silent';

export const LogFormat = {
  /** One JSON object per line (pino's format): for a log collector. */
  json: 'json',
  /** `time LEVEL msg key=value…`: for a person at a terminal. */
  text: 'text',
} as const;
export type LogFormat = (typeof LogFormat)[keyof typeof LogFormat];

/** The variables that choose the level and format when the options do not. */
export const LOG_LEVEL_VARIABLE = 'RESIDUUM_LOG_LEVEL';
export const LOG_FORMAT_VARIABLE = 'RESIDUUM_LOG_FORMAT';

/** What replaces a secret in a line (pino's own default censor). */
export const REDACTED = '[Redacted]';

/**
 * Field names whose values are never written, at the top and one level down (pino `redact` paths,
 * docs/redaction.md). The components log text, not these fields; this guards the fields a later
 * change might add.
 */
export const REDACTED_FIELDS: readonly string[] = ['key', 'adminKey', 'viewKey', 'token', 'password', 'secret', 'authorization', 'cookie'].flatMap((k) => [k, `*.${k}`]);

/** Shortest value {@link ServiceLog.hide} takes: shorter ones would blank ordinary words (no key or password here is that short). */
export const MIN_HIDDEN_LENGTH = 4;

export interface ServiceLogOptions {
  /** Lines below this level are dropped; default info. */
  readonly level?: LogThreshold;
  /** Default json. */
  readonly format?: LogFormat;
  /** Where lines go; default standard output. */
  readonly out?: { write(text: string): unknown };
}

export interface ServiceLog {
  /** The function handed to the components. */
  readonly log: Log;
  /** The pino logger behind it (for a child logger with fixed fields). */
  readonly logger: Logger;
  /** Never writes `value` (nor its JSON-escaped form) from now on; undefined and empty are ignored. */
  hide(value: string | undefined): void;
}

const PREFIX = /^(?:camera ([A-Za-z0-9][A-Za-z0-9_-]*(?:--[A-Za-z0-9_-]+)?): |([a-z]+): )/;

/** Camera or component from the line's leading `camera <id>: ` or `<component>: `. */
export function fieldsFromLine(line: string): LogFields {
  const m = PREFIX.exec(line);
  if (!m) return {};
  return m[1] !== undefined ? { camera: m[1] } : { component: m[2] };
}

/** The service log: pino over `out` (see the file's comment). */
export function createServiceLog(options: ServiceLogOptions = {}): ServiceLog {
  const { level = LogLevel.info, format = LogFormat.json, out = process.stdout } = options;
  const hidden = new Set<string>();
  const scrub = (text: string) => {
    for (const value of hidden) if (text.includes(value)) text = text.split(value).join(REDACTED);
    return text;
  };
  const destination = {
    write(line: string) {
      const clean = scrub(line);
      out.write(format === LogFormat.text ? textLine(clean) : clean);
    },
  };
  // check: pino docs/api.md: `formatters.level(label, number)` shapes the level field;
  // `timestamp: stdTimeFunctions.isoTime` writes `"time":"<ISO 8601>"`; a destination is any
  // object with `write(string)`, called once per line with its "\n"; `redact` per docs/redaction.md.
  const logger = pino(
    {
      level,
      formatters: { level: (label) => ({ level: label }) },
      timestamp: stdTimeFunctions.isoTime,
      redact: { paths: [...REDACTED_FIELDS], censor: REDACTED },
    },
    destination,
  );
  const log: Log = (line, at = LogLevel.info, fields) => {
    if (!logger.isLevelEnabled(at)) return;
    logger[at]({ ...fieldsFromLine(line), ...fields }, '%s', line);
  };
  return {
    log,
    logger,
    hide(value) {
      if (value === undefined || value.length < MIN_HIDDEN_LENGTH) return;
      hidden.add(value);
      const escaped = JSON.stringify(value).slice(1, -1);
      if (escaped !== value) hidden.add(escaped);
    },
  };
}

const SHOWN_IN_TEXT = new Set(['level', 'time', 'msg', 'pid', 'hostname', 'camera', 'component']);

/** A JSON record as `time LEVEL msg key=value…` (camera and component are already in msg). */
export function textLine(json: string): string {
  let record: Record<string, unknown>;
  try {
    record = JSON.parse(json) as Record<string, unknown>;
  } catch {
    return json;
  }
  const extra = Object.entries(record)
    .filter(([k]) => !SHOWN_IN_TEXT.has(k))
    .map(([k, v]) => ` ${k}=${typeof v === 'string' && /^[^\s"=]+$/.test(v) ? v : JSON.stringify(v)}`)
    .join('');
  return `${String(record.time)} ${String(record.level).toUpperCase().padEnd(5)} ${String(record.msg)}${extra}\n`;
}

const THRESHOLDS: readonly string[] = [...Object.values(LogLevel), 'silent'];

/**
 * The level and format from `--log-level` / `--log-format`, else RESIDUUM_LOG_LEVEL /
 * RESIDUUM_LOG_FORMAT, else info, and text when `out` is a terminal, json otherwise.
 * A wrong option is a UsageError, a wrong variable a ConfigError, each naming what was wrong.
 */
export function logSettings(
  values: { readonly 'log-level'?: string | undefined; readonly 'log-format'?: string | undefined },
  env: Readonly<Record<string, string | undefined>> = process.env,
  out: { readonly isTTY?: boolean } = process.stdout,
): { level: LogThreshold; format: LogFormat } {
  const pick = <T extends string>(option: string, variable: string, allowed: readonly string[], fallback: T): T => {
    const fromOption = values[option as 'log-level'];
    if (fromOption !== undefined) {
      if (!allowed.includes(fromOption)) throw new UsageError(`--${option} must be one of ${allowed.join(', ')}, got "${fromOption}"`);
      return fromOption as T;
    }
    const fromEnv = env[variable];
    if (fromEnv !== undefined && fromEnv !== '') {
      if (!allowed.includes(fromEnv)) throw new ConfigError(`${variable} must be one of ${allowed.join(', ')}, got "${fromEnv}"`);
      return fromEnv as T;
    }
    return fallback;
  };
  return {
    level: pick<LogThreshold>('log-level', LOG_LEVEL_VARIABLE, THRESHOLDS, LogLevel.info),
    format: pick<LogFormat>('log-format', LOG_FORMAT_VARIABLE, Object.values(LogFormat), out.isTTY === true ? LogFormat.text : LogFormat.json),
  };
}

/** The options `--log-level` and `--log-format` for parseOptions. */
export const LOG_OPTIONS = { 'log-level': { type: 'string' }, 'log-format': { type: 'string' } } as const;

/** The usage lines of the log options. */
export const LOG_USAGE = `  --log-level   fatal, error, warn, info (default), debug, trace or silent; or ${LOG_LEVEL_VARIABLE}
  --log-format  json (one object per line; default when standard output is not a terminal) or text; or ${LOG_FORMAT_VARIABLE}`;

/** The secrets in a validated configuration, for {@link ServiceLog.hide}. */
export function configSecrets(config: {
  readonly mqtt?: { readonly password?: string } | undefined;
  readonly alerts?: { readonly webhooks?: readonly { readonly secret?: string }[]; readonly email?: { readonly smtp?: { readonly password?: string } } } | undefined;
  readonly storageUrl?: string | undefined;
}): string[] {
  const found: (string | undefined)[] = [config.mqtt?.password, config.alerts?.email?.smtp?.password, ...(config.alerts?.webhooks ?? []).map((w) => w.secret)];
  if (config.storageUrl !== undefined) {
    try {
      const password = new URL(config.storageUrl).password;
      if (password !== '') found.push(password, decodeURIComponent(password));
    } catch {
      // Not a URL (a connection string of another form): nothing to take out of it.
    }
  }
  return found.filter((s): s is string => s !== undefined && s !== '');
}
