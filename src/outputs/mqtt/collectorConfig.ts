import { readFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { parse as parseYaml } from 'yaml';
import { ConfigError } from '../../config/ConfigError.ts';
import { MqttRole, validateMqttSettings, type MqttSettings } from './mqttSettings.ts';

/**
 * The configuration of `residuum collect`: like the counting service's (same `site`, `storage`
 * and `server` sections, same messages), without cameras, with a required `mqtt` section.
 *
 * ```yaml
 * site: { name: Head office, timeZone: Europe/Berlin }   # the zone of the collected database's hourly export
 * storage: { sampleRetentionDays: 90 }
 * server: { host: 127.0.0.1, port: 8080 }               # the read-only dashboard over all collected sites
 * mqtt: { url: "mqtts://broker.example.net:8883", username: collector, password: secret }
 * ```
 */
export interface CollectorConfig {
  /** The file it was read from (for messages). */
  readonly file: string;
  readonly site: { readonly name: string; readonly timeZone: string };
  readonly storage: { readonly sampleRetentionDays: number };
  readonly server: { readonly host: string; readonly port: number; readonly viewToken: boolean };
  readonly mqtt: MqttSettings;
}

/** Reads and validates a collector configuration file (YAML; JSON is YAML too). */
export function loadCollectorConfig(file: string): CollectorConfig {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    throw new ConfigError(`${file}: ${code === 'ENOENT' ? 'no such configuration file' : (error as Error).message}`);
  }
  let doc: unknown;
  try {
    doc = parseYaml(text);
  } catch (error) {
    throw new ConfigError(`${file}: not valid YAML (${(error as Error).message.split('\n')[0]})`);
  }
  return validateCollectorConfig(doc, file);
}

type Fail = (path: string, message: string) => never;

/**
 * Validates a parsed collector configuration; unknown keys are errors and every message names the
 * file and field, e.g. `collect.yaml: mqtt.url must start with mqtt:, mqtts:, ws:, wss:, got "http:"`.
 * The `site`, `storage` and `server` rules and defaults are those of loadConfig.ts.
 */
export function validateCollectorConfig(doc: unknown, file = 'config'): CollectorConfig {
  const fail: Fail = (path, message) => {
    throw new ConfigError(`${file}: ${path} ${message}`);
  };
  const root = record(doc, 'configuration', fail, ['site', 'storage', 'server', 'mqtt']);
  if (root.mqtt === undefined) fail('mqtt', 'is required: the broker to collect from (mqtt: { url: mqtt://… })');
  const site = record(root.site ?? {}, 'site', fail, ['name', 'timeZone']);
  const timeZone = site.timeZone ?? Intl.DateTimeFormat().resolvedOptions().timeZone;
  if (typeof timeZone !== 'string' || !isTimeZone(timeZone)) fail('site.timeZone', `must be an IANA time zone such as Europe/Berlin, got ${show(timeZone)}`);
  const storage = record(root.storage ?? {}, 'storage', fail, ['sampleRetentionDays']);
  const server = record(root.server ?? {}, 'server', fail, ['host', 'port', 'viewToken']);
  const host = server.host ?? '127.0.0.1';
  if (typeof host !== 'string' || host === '') fail('server.host', `must be a host name or address, got ${show(host)}`);
  const viewToken = server.viewToken ?? false;
  if (typeof viewToken !== 'boolean') fail('server.viewToken', `must be true or false, got ${show(viewToken)}`);
  const name = site.name ?? 'Residuum collector';
  if (typeof name !== 'string' || name.length === 0 || name.length > 2000) fail('site.name', `must be non-empty text, got ${show(name)}`);
  return {
    file,
    site: { name: name as string, timeZone: timeZone as string },
    storage: { sampleRetentionDays: int(storage.sampleRetentionDays ?? 30, 'storage.sampleRetentionDays', fail, 1, 36500) },
    server: { host: host as string, port: int(server.port ?? 8080, 'server.port', fail, 0, 65535), viewToken: viewToken as boolean },
    mqtt: validateMqttSettings(root.mqtt, { file, base: dirname(resolve(file)), role: MqttRole.collector }),
  };
}

function record(v: unknown, at: string, fail: Fail, keys: string[]): Record<string, unknown> {
  if (typeof v !== 'object' || v === null || Array.isArray(v)) return fail(at, `must be a mapping (key: value), got ${show(v)}`);
  for (const key of Object.keys(v)) if (!keys.includes(key)) fail(`${at === 'configuration' ? '' : at + '.'}${key}`, `is not a known setting here (known: ${keys.join(', ')})`);
  return v as Record<string, unknown>;
}

function int(v: unknown, at: string, fail: Fail, min: number, max: number): number {
  if (typeof v !== 'number' || !Number.isInteger(v) || v < min || v > max) fail(at, `must be a whole number from ${min} to ${max}, got ${show(v)}`);
  return v as number;
}

function isTimeZone(zone: string): boolean {
  try {
    new Intl.DateTimeFormat('en', { timeZone: zone });
    return zone.includes('/') || zone === 'UTC';
  } catch {
    return false;
  }
}

function show(v: unknown): string {
  if (typeof v === 'number') return String(v);
  if (v === undefined) return 'nothing';
  const s = JSON.stringify(v);
  return s === undefined ? String(v) : s.length > 60 ? s.slice(0, 57) + '...' : s;
}
