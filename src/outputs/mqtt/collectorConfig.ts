import { dirname, resolve } from 'node:path';
import { configFail, readConfigDocument, record, validateCommonSections, type CommonSections } from '../../config/loadConfig.ts';
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
export interface CollectorConfig extends CommonSections {
  /** The file it was read from (for messages). */
  readonly file: string;
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
  return {
    file,
    ...validateCommonSections(root, fail, 'Residuum collector'),
    mqtt: validateMqttSettings(root.mqtt, { file, base: dirname(resolve(file)), role: MqttRole.collector }),
  };
}
