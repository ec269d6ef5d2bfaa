import { readFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { parse as parseYaml } from 'yaml';
import { validateZones, ZONE_RANGES } from '../counting/parseZones.ts';
import type { Zone } from '../domain/zone.ts';
import type { CameraSourceDescription } from '../frames/live/createCameraSource.ts';
import { sceneIds } from '../frames/synthetic/index.ts';
import { validateMqttSettings, type MqttSettings } from '../outputs/mqtt/mqttSettings.ts';
import { validateAlertSettings, type AlertSettings } from '../outputs/alerts/alertSettings.ts';

import { ConfigError } from './ConfigError.ts';

export { ConfigError };

export type { CameraConfig, SmoothingConfig } from '../counting/cameraConfig.ts';
import type { CameraConfig, SmoothingConfig } from '../counting/cameraConfig.ts';

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

export type Fail = (path: string, message: string) => never;

/** The `fail` of a file's validation: throws a ConfigError starting with the file name. */
export function configFail(file: string): Fail {
  return (path, message) => {
    throw new ConfigError(`${file}: ${path} ${message}`);
  };
}

/** The sections every configuration has: site, storage and server (defaults filled in). */
export interface CommonSections {
  readonly site: ResiduumConfig['site'];
  readonly storage: ResiduumConfig['storage'];
  readonly server: ResiduumConfig['server'];
}

/**
 * Validates `site`, `storage` and `server` of a parsed configuration root (the counting service's
 * and the collector's alike).
 */
export function validateCommonSections(root: Record<string, unknown>, fail: Fail, defaultSiteName: string): CommonSections {
  const site = record(root.site ?? {}, 'site', fail, ['name', 'timeZone']);
  const timeZone = site.timeZone ?? Intl.DateTimeFormat().resolvedOptions().timeZone;
  if (typeof timeZone !== 'string' || !isTimeZone(timeZone)) fail('site.timeZone', `must be an IANA time zone such as Europe/Berlin, got ${show(timeZone)}`);
  const storage = record(root.storage ?? {}, 'storage', fail, ['sampleRetentionDays', 'rollupRetentionDays']);
  const sampleRetentionDays = int(storage.sampleRetentionDays ?? 30, 'storage.sampleRetentionDays', fail, 1, 36500);
  const rollupRetentionDays =
    storage.rollupRetentionDays === undefined
      ? undefined
      : int(storage.rollupRetentionDays, 'storage.rollupRetentionDays', fail, sampleRetentionDays, 36500);
  const server = record(root.server ?? {}, 'server', fail, ['host', 'port', 'viewToken']);
  const host = server.host ?? '127.0.0.1';
  if (typeof host !== 'string' || host === '') fail('server.host', `must be a host name or address, got ${show(host)}`);
  return {
    site: { name: text(site.name ?? defaultSiteName, 'site.name', fail), timeZone: timeZone as string },
    storage: { sampleRetentionDays, ...(rollupRetentionDays !== undefined && { rollupRetentionDays }) },
    server: { host: host as string, port: int(server.port ?? 8080, 'server.port', fail, 0, 65535), viewToken: bool(server.viewToken, 'server.viewToken', fail) ?? false },
  };
}

/**
 * Validates a parsed configuration. Unknown keys are errors (a misspelt option must not be
 * silently ignored); every message names the file and the field path, e.g.
 * `demo.yaml: cameras[0].source.kind must be one of drop-folder, snapshot, mjpeg, ffmpeg, synthetic, got "usb"`.
 */
export function validateConfig(doc: unknown, file = 'config'): ResiduumConfig {
  const fail = configFail(file);
  const root = record(doc, 'configuration', fail, ['site', 'storage', 'server', 'models', 'cameras', 'mqtt', 'alerts']);
  const common = validateCommonSections(root, fail, 'Residuum site');
  const cameras = root.cameras;
  if (!Array.isArray(cameras) || cameras.length === 0) fail('cameras', 'must be a list of at least one camera');
  const base = dirname(resolve(file));
  const seen = new Set<string>();
  const parsed = (cameras as unknown[]).map((raw, i) => {
    const camera = validateCamera(raw, `cameras[${i}]`, fail, file, base);
    if (seen.has(camera.id)) fail(`cameras[${i}].id`, `"${camera.id}" is used twice`);
    seen.add(camera.id);
    return camera;
  });
  const models = record(root.models ?? {}, 'models', fail, ['keep']);
  return {
    file,
    ...common,
    models: { keep: int(models.keep ?? 5, 'models.keep', fail, 1, 50) },
    cameras: parsed,
    ...(root.mqtt !== undefined && { mqtt: validateMqttSettings(root.mqtt, { file, base }) }),
    ...(root.alerts !== undefined && { alerts: validateAlertSettings(root.alerts, { file, base }) }),
  };
}

/**
 * Validates one camera (as under `cameras:`) on its own, e.g. a camera added from the dashboard;
 * messages name `file` and the field under `at` (`request body: camera.source.url must be …`).
 * Relative paths resolve against `base`.
 */
export function validateCameraConfig(raw: unknown, options: { file: string; at: string; base: string }): CameraConfig {
  return validateCamera(raw, options.at, configFail(options.file), options.file, options.base);
}

const cameraKeys = ['id', 'name', 'source', 'size', 'model', 'learnSeconds', 'sampleSeconds', 'smoothing', 'threshold', 'adaptToDrift', 'zones'];

function validateCamera(raw: unknown, at: string, fail: Fail, file: string, base: string): CameraConfig {
  const c = record(raw, at, fail, cameraKeys);
  const id = c.id;
  if (typeof id !== 'string' || !/^[A-Za-z0-9][A-Za-z0-9_-]{0,63}$/.test(id)) {
    fail(`${at}.id`, `must be 1–64 letters, digits, "-" or "_", starting with a letter or digit, got ${show(id)}`);
  }
  const sizeRaw = c.size ?? [320, 240];
  if (!Array.isArray(sizeRaw) || sizeRaw.length !== 2) fail(`${at}.size`, `must be [width, height] in pixels, got ${show(sizeRaw)}`);
  const size = {
    width: int((sizeRaw as unknown[])[0], `${at}.size[0]`, fail, 16, 4096),
    height: int((sizeRaw as unknown[])[1], `${at}.size[1]`, fail, 16, 4096),
  };
  const source = validateSource(c.source, `${at}.source`, fail, id as string, size, base);
  const smoothing = record(c.smoothing ?? {}, `${at}.smoothing`, fail, ['window', 'method']);
  const method = smoothing.method ?? 'median';
  if (method !== 'median' && method !== 'mean') fail(`${at}.smoothing.method`, `must be median or mean, got ${show(method)}`);
  let zones: Zone[];
  try {
    zones = c.zones === undefined
      ? [{ id: 'all', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] }]
      : validateZones(c.zones, file, `${at}.zones`);
  } catch (error) {
    throw new ConfigError((error as Error).message);
  }
  return {
    id: id as string,
    name: text(c.name ?? id, `${at}.name`, fail),
    source,
    ...(c.model !== undefined && { model: resolve(base, text(c.model, `${at}.model`, fail)) }),
    learnSeconds: num(c.learnSeconds ?? 30, `${at}.learnSeconds`, fail, 1, 3600),
    sampleSeconds: num(c.sampleSeconds ?? 10, `${at}.sampleSeconds`, fail, 1, 3600),
    smoothing: { window: int(smoothing.window ?? 5, `${at}.smoothing.window`, fail, 1, 1000), method: method as 'median' | 'mean' },
    threshold: num(c.threshold ?? 3, `${at}.threshold`, fail, ZONE_RANGES.threshold[0], ZONE_RANGES.threshold[1]),
    ...(c.adaptToDrift !== undefined && { adaptToDrift: bool(c.adaptToDrift, `${at}.adaptToDrift`, fail) }),
    zones,
  };
}

const sourceKeys: Record<string, string[]> = {
  'drop-folder': ['path', 'afterRead', 'scanIntervalMs', 'settleMs', 'colour'],
  snapshot: ['url', 'intervalMs', 'username', 'password', 'timeoutMs', 'colour'],
  mjpeg: ['url', 'username', 'password', 'stallMs', 'colour'],
  ffmpeg: ['input', 'realtime', 'loop', 'options', 'stallMs', 'colour'],
  synthetic: ['scene', 'speed', 'seed', 'colour'],
};

/** Synthetic scenes a camera can play: the scene library's, and the reading room in colour with shadows. */
const cameraSceneIds: readonly string[] = [...sceneIds, 'shadow-room'];

function validateSource(
  raw: unknown,
  at: string,
  fail: Fail,
  id: string,
  size: { width: number; height: number },
  base: string,
): CameraSourceDescription {
  const kinds = Object.keys(sourceKeys);
  const kind = (raw as { kind?: unknown } | undefined)?.kind;
  if (typeof kind !== 'string' || !kinds.includes(kind)) fail(`${at}.kind`, `must be one of ${kinds.join(', ')}, got ${show(kind)}`);
  const s = record(raw, at, fail, ['kind', ...sourceKeys[kind as string]]);
  const optInt = (key: string, min: number, max: number) => (s[key] === undefined ? undefined : int(s[key], `${at}.${key}`, fail, min, max));
  const optText = (key: string) => (s[key] === undefined ? undefined : text(s[key], `${at}.${key}`, fail));
  const url = (key: string) => {
    const v = text(s[key], `${at}.${key}`, fail);
    let parsed: URL;
    try {
      parsed = new URL(v);
    } catch {
      return fail(`${at}.${key}`, `must be an http: or https: URL, got ${show(v)}`);
    }
    if (parsed.protocol !== 'http:' && parsed.protocol !== 'https:') fail(`${at}.${key}`, `must be an http: or https: URL, got ${show(v)}`);
    return v;
  };
  // Colour mode (shadow suppression): only sources that can deliver colour.
  const colour = s.colour === undefined ? false : bool(s.colour, `${at}.colour`, fail);
  if (colour && kind === 'ffmpeg') fail(`${at}.colour`, 'ffmpeg sources deliver grey frames only; use a snapshot, mjpeg or drop-folder source for the colour mode');
  if (colour && kind === 'synthetic' && s.scene !== 'shadow-room') fail(`${at}.colour`, `only the synthetic scene shadow-room renders colour, got scene ${show(s.scene)}`);
  const common = { id, size, ...(colour && { colour }) };
  switch (kind) {
    case 'drop-folder': {
      const afterRead = s.afterRead ?? 'delete';
      if (afterRead !== 'delete' && afterRead !== 'keep') fail(`${at}.afterRead`, `must be delete or keep, got ${show(afterRead)}`);
      return { ...common, kind, path: resolve(base, text(s.path, `${at}.path`, fail)), afterRead: afterRead as 'delete' | 'keep', scanIntervalMs: optInt('scanIntervalMs', 1, 3_600_000), settleMs: optInt('settleMs', 0, 600_000) };
    }
    case 'snapshot':
      return { ...common, kind, url: url('url'), intervalMs: optInt('intervalMs', 1, 3_600_000), username: optText('username'), password: optText('password'), timeoutMs: optInt('timeoutMs', 1, 600_000) };
    case 'mjpeg':
      return { ...common, kind, url: url('url'), username: optText('username'), password: optText('password'), stallMs: optInt('stallMs', 1, 3_600_000) };
    case 'ffmpeg': {
      const options = s.options;
      if (options !== undefined && !(Array.isArray(options) && options.every((o) => typeof o === 'string'))) fail(`${at}.options`, 'must be a list of strings');
      return { ...common, kind, input: text(s.input, `${at}.input`, fail), realtime: bool(s.realtime, `${at}.realtime`, fail), loop: bool(s.loop, `${at}.loop`, fail), options: options as string[] | undefined, stallMs: optInt('stallMs', 1, 3_600_000) };
    }
    default: {
      const scene = s.scene;
      if (typeof scene !== 'string' || !cameraSceneIds.includes(scene)) fail(`${at}.scene`, `must be one of ${cameraSceneIds.join(', ')}, got ${show(scene)}`);
      return { ...common, kind: 'synthetic', scene: scene as (typeof sceneIds)[number] | 'shadow-room', speed: s.speed === undefined ? undefined : num(s.speed, `${at}.speed`, fail, 0.01, 1000), seed: optInt('seed', 0, 2 ** 31) };
    }
  }
}

/** A mapping with only the given keys; the message names the unknown key and lists the known ones. */
export function record(v: unknown, at: string, fail: Fail, keys: string[]): Record<string, unknown> {
  if (typeof v !== 'object' || v === null || Array.isArray(v)) return fail(at, `must be a mapping (key: value), got ${show(v)}`);
  for (const key of Object.keys(v)) if (!keys.includes(key)) fail(`${at === 'configuration' ? '' : at + '.'}${key}`, `is not a known setting here (known: ${keys.join(', ')})`);
  return v as Record<string, unknown>;
}

export function int(v: unknown, at: string, fail: Fail, min: number, max: number): number {
  if (typeof v !== 'number' || !Number.isInteger(v) || v < min || v > max) fail(at, `must be a whole number from ${min} to ${max}, got ${show(v)}`);
  return v as number;
}

function num(v: unknown, at: string, fail: Fail, min: number, max: number): number {
  if (typeof v !== 'number' || !Number.isFinite(v) || v < min || v > max) fail(at, `must be a number from ${min} to ${max}, got ${show(v)}`);
  return v as number;
}

function text(v: unknown, at: string, fail: Fail): string {
  if (typeof v !== 'string' || v.length === 0 || v.length > 2000) fail(at, `must be non-empty text, got ${show(v)}`);
  return v as string;
}

function bool(v: unknown, at: string, fail: Fail): boolean | undefined {
  if (v !== undefined && typeof v !== 'boolean') fail(at, `must be true or false, got ${show(v)}`);
  return v as boolean | undefined;
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
