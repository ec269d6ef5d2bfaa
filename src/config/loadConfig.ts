import { readFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { parse as parseYaml } from 'yaml';
import type { AlertSettings } from '../outputs/alerts/alertSettings.ts';
import type { MqttSettings } from '../outputs/mqtt/mqttSettings.ts';
import { ConfigError } from './ConfigError.ts';
import { cameraSchema, residuumConfigSchema } from './configSchema.ts';
import { parseOrThrow } from './schemaFields.ts';

export { ConfigError };

export type { CameraConfig, SmoothingConfig } from '../counting/cameraConfig.ts';
import type { CameraConfig } from '../counting/cameraConfig.ts';

/**
 * A validated configuration: what residuumConfigSchema (configSchema.ts) makes of the file, and
 * `file`. Written out here (readonly, documented) because configurations are built in code too;
 * the schema's transform is checked against it by the compiler.
 */
export interface ResiduumConfig {
  /** The file it was read from (for messages). */
  readonly file: string;
  readonly site: { readonly name: string; readonly timeZone: string };
  /** Samples kept N days; rollups kept N days when set, else until deleted. */
  readonly storage: { readonly sampleRetentionDays: number; readonly rollupRetentionDays?: number };
  /** HTTP server: listen address and port; `viewToken` true = reading counts needs a key too. */
  readonly server: { readonly host: string; readonly port: number; readonly viewToken: boolean };
  readonly cameras: readonly CameraConfig[];
  /**
   * Learned empty-scene models: `keep` per camera (1..50, default 5), the one in use among them;
   * older ones are deleted after each new one is stored (about 4 MB each at 320×240). Always
   * filled in by validateConfig; a configuration built in code may leave it out (then 5).
   */
  readonly models?: { readonly keep: number };
  /** MQTT publishing of counts and events (optional). */
  readonly mqtt?: MqttSettings;
  /** Alerts by webhook and e-mail (optional; see src/outputs/alerts/alertSettings.ts). */
  readonly alerts?: AlertSettings;
}

/** Reads and validates a configuration file (YAML; JSON is YAML too). */
export function loadConfig(file: string): ResiduumConfig {
  return validateConfig(readConfigDocument(file), file);
}

/** Reads a YAML (or JSON) configuration file; a missing or unparsable file is a ConfigError naming it. */
export function readConfigDocument(file: string): unknown {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    throw new ConfigError(`${file}: ${code === 'ENOENT' ? 'no such configuration file' : (error as Error).message}`);
  }
  try {
    return parseYaml(text);
  } catch (error) {
    throw new ConfigError(`${file}: not valid YAML (${(error as Error).message.split('\n')[0]})`);
  }
}

/**
 * Validates a parsed configuration with the schema of configSchema.ts. Unknown keys are errors (a
 * misspelt option must not be silently ignored); every message names the file and the field path,
 * e.g. `demo.yaml: cameras[0].source.kind must be one of drop-folder, snapshot, mjpeg, ffmpeg, synthetic, got "usb"`.
 */
export function validateConfig(doc: unknown, file = 'config'): ResiduumConfig {
  return { file, ...parseOrThrow(residuumConfigSchema({ base: dirname(resolve(file)) }), doc, file) };
}

/**
 * Validates one camera (as under `cameras:`) on its own, e.g. a camera added from the dashboard;
 * messages name `file` and the field under `at` (`request body: camera.source.url must be …`).
 * Relative paths resolve against `base`.
 */
export function validateCameraConfig(raw: unknown, options: { file: string; at: string; base: string }): CameraConfig {
  return parseOrThrow(cameraSchema(options.base), raw, options.file, options.at);
}
