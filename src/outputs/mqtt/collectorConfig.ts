import { dirname, resolve } from 'node:path';
import { configFail, readConfigDocument, record, validateCommonSections, type CommonSections } from '../../config/loadConfig.ts';
import { MqttRole, validateMqttSettings, type MqttSettings } from './mqttSettings.ts';

/**
 * The configuration of `residuum collect`: like the counting service's (same `site`, `storage`
 * and `server` sections, same messages), without cameras, with a required `mqtt` section.
 *
 * ```yaml
 * site: { name: Head office, timeZone: Europe/Berlin }   # the zone of the collected database's hourly export
 * storage: { sampleRetentionDays: 90, url: "postgres://residuum@db.example.net:5432/residuum" }   # url: optional, default SQLite
 * server: { host: 127.0.0.1, port: 8080 }               # the read-only dashboard over all collected sites
 * mqtt: { url: "mqtts://broker.example.net:8883", username: collector, password: secret }
 * ```
 */
export interface CollectorConfig extends CommonSections {
  /** The file it was read from (for messages). */
  readonly file: string;
  /** `storage.url`: the PostgreSQL central store (`postgres://user@host:5432/db`); absent: SQLite in the data folder. */
  readonly storageUrl?: string;
  readonly mqtt: MqttSettings;
}

/** Reads and validates a collector configuration file (YAML; JSON is YAML too). */
export function loadCollectorConfig(file: string): CollectorConfig {
  return validateCollectorConfig(readConfigDocument(file), file);
}

/**
 * Validates a parsed collector configuration; unknown keys are errors and every message names the
 * file and field, e.g. `collect.yaml: mqtt.url must start with mqtt:, mqtts:, ws:, wss:, got "http:"`.
 * The `site`, `storage` and `server` sections are the counting service's (validateCommonSections).
 */
export function validateCollectorConfig(doc: unknown, file = 'config'): CollectorConfig {
  const fail = configFail(file);
  const root = record(doc, 'configuration', fail, ['site', 'storage', 'server', 'mqtt']);
  if (root.mqtt === undefined) fail('mqtt', 'is required: the broker to collect from (mqtt: { url: mqtt://… })');
  // storage.url is the collector's own key; the rest of storage is the counting service's.
  let storageUrl: string | undefined;
  let rest = root;
  if (typeof root.storage === 'object' && root.storage !== null && !Array.isArray(root.storage) && 'url' in root.storage) {
    const { url, ...storage } = root.storage as Record<string, unknown>;
    storageUrl = postgresUrl(url, fail);
    rest = { ...root, storage };
  }
  return {
    file,
    ...validateCommonSections(rest, fail, 'Residuum collector'),
    ...(storageUrl !== undefined && { storageUrl }),
    mqtt: validateMqttSettings(root.mqtt, { file, base: dirname(resolve(file)), role: MqttRole.collector }),
  };
}

/** A `postgres:` or `postgresql:` URL naming a host and a database. */
function postgresUrl(v: unknown, fail: (path: string, message: string) => never): string {
  if (typeof v !== 'string' || v === '') return fail('storage.url', `must be a PostgreSQL URL such as postgres://residuum@127.0.0.1:5432/residuum, got ${JSON.stringify(v)}`);
  let u: URL;
  try {
    u = new URL(v);
  } catch {
    return fail('storage.url', 'must be a PostgreSQL URL such as postgres://residuum@127.0.0.1:5432/residuum');
  }
  // Never echo the URL itself: it may hold a password.
  if (u.protocol !== 'postgres:' && u.protocol !== 'postgresql:') fail('storage.url', `must start with postgres: or postgresql:, got ${JSON.stringify(u.protocol)}`);
  if (u.hostname === '') fail('storage.url', 'must name a host (postgres://user@host:5432/db)');
  if (u.pathname.length <= 1) fail('storage.url', 'must name a database (postgres://user@host:5432/db)');
  return v;
}
