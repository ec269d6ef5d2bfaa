import { dirname, resolve } from 'node:path';
import { collectorConfigSchema } from '../../config/configSchema.ts';
import { readConfigDocument, type ResiduumConfig } from '../../config/loadConfig.ts';
import { parseOrThrow } from '../../config/schemaFields.ts';
import type { MqttSettings } from './mqttSettings.ts';

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
export interface CollectorConfig extends Pick<ResiduumConfig, 'site' | 'storage' | 'server'> {
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
 * Validates a parsed collector configuration with collectorConfigSchema (src/config/configSchema.ts);
 * unknown keys are errors and every message names the file and field, e.g.
 * `collect.yaml: mqtt.url must start with mqtt:, mqtts:, ws:, wss:, got "http:"`.
 * The `site`, `storage` and `server` sections are the counting service's.
 */
export function validateCollectorConfig(doc: unknown, file = 'config'): CollectorConfig {
  return { file, ...parseOrThrow(collectorConfigSchema({ base: dirname(resolve(file)) }), doc, file) };
}
