import { LogLevel } from '../../src/domain/log.ts';

/** One record of the service log as written on standard output. */
export interface LogRecord {
  readonly level: LogLevel;
  readonly time: string;
  readonly msg: string;
  readonly camera?: string;
  readonly component?: string;
  readonly [field: string]: unknown;
}

/**
 * Every line of `output` as a JSON log record; throws naming the first line that is not one (not
 * JSON, or without a known level, an ISO 8601 time or a message).
 */
// check: pino docs/api.md — one JSON object per line with `level`, `time` and `msg`; the level as
// its label (formatters.level), the time as ISO 8601 (stdTimeFunctions.isoTime).
export function logRecords(output: Buffer | string): LogRecord[] {
  const text = output.toString();
  const lines = text.split('\n');
  if (lines.at(-1) === '') lines.pop();
  return lines.map((line, i) => {
    let record: Record<string, unknown>;
    try {
      record = JSON.parse(line) as Record<string, unknown>;
    } catch {
      throw new Error(`line ${i + 1} of standard output is not JSON: ${line.slice(0, 300)}`);
    }
    if (record === null || typeof record !== 'object' || Array.isArray(record)) throw new Error(`line ${i + 1} is not a JSON object: ${line.slice(0, 300)}`);
    if (!(Object.values(LogLevel) as unknown[]).includes(record.level)) throw new Error(`line ${i + 1} has no known level: ${line.slice(0, 300)}`);
    // ISO 8601 in UTC as Date.prototype.toISOString writes it (ECMA-262, Date Time String Format).
    if (typeof record.time !== 'string' || !/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$/.test(record.time)) throw new Error(`line ${i + 1} has no ISO 8601 time: ${line.slice(0, 300)}`);
    if (typeof record.msg !== 'string' || record.msg === '') throw new Error(`line ${i + 1} has no message: ${line.slice(0, 300)}`);
    return record as LogRecord;
  });
}
