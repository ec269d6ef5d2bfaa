/**
 * The service log as every layer sees it: a function taking one line of text, its level and, if
 * wanted, a few fields (camera, zone…). Components are handed such a function and never know
 * where the lines go; the commands turn them into JSON lines on standard output
 * (src/commands/serviceLog.ts). A function that takes only the line still fits, so tests may pass
 * `(line) => lines.push(line)`.
 *
 * A line never holds a key, token, password or secret: say that a key was wrong, not which.
 */

/** Levels from the most to the least severe (the names pino and syslog-style tools use). */
export const LogLevel = {
  /** The process cannot go on (it exits). */
  fatal: 'fatal',
  /** Something failed: data not stored, a thread crashed, a delivery given up. */
  error: 'error',
  /** A degraded state that may heal or needs a look: camera offline, a refused file, a retry. */
  warn: 'warn',
  /** Start and stop, cameras started, models learned, settings changed. */
  info: 'info',
  /** Chatty detail: reconnect attempts, skipped frames. */
  debug: 'debug',
  /** Finer still; nothing logs at this level today. */
  trace: 'trace',
} as const;
export type LogLevel = (typeof LogLevel)[keyof typeof LogLevel];

/** Fields beside the line; camera and component are taken from a leading `camera <id>: ` or `<component>: ` when not given. */
export interface LogFields {
  readonly camera?: string;
  readonly zone?: string;
  readonly component?: string;
  readonly [field: string]: unknown;
}

/** Logs one line at `level` (default info). */
export type Log = (line: string, level?: LogLevel, fields?: LogFields) => void;
