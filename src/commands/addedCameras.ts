import { dirname, resolve } from 'node:path';
import { ConfigError, validateCameraConfig, type CameraConfig, type ResiduumConfig } from '../config/loadConfig.ts';
import type { CameraHost } from '../counting/cameraHost.ts';
import { redactUrl } from '../frames/live/httpGet.ts';
import { probeSource, SourceProbeError, type ProbeResult } from '../frames/live/probeSource.ts';
import type { CameraSourceDescription } from '../frames/live/createCameraSource.ts';
import { workingSize, type Size } from '../frames/workingSize.ts';
import { CameraSetupError, type AddedCamera, type ServiceControl } from '../server/serviceControl.ts';
import type { Store } from '../store/index.ts';
import type { Log } from '../domain/log.ts';

/**
 * Cameras added from the dashboard (`POST /api/cameras`): checked (the source must give a picture
 * that decodes at the working size), kept in the database's settings under {@link ADDED_CAMERAS}
 * so that they run again after a restart, started at once in their own worker thread, and removed
 * again (`DELETE /api/cameras/:id`). Cameras of the configuration file are edited there, not here.
 *
 * Only HTTP cameras can be added this way (`snapshot`, `mjpeg`): a folder, a device or ffmpeg
 * options are the machine's business and stay in the configuration file.
 */

/** Settings key of the added cameras: a list of camera descriptions as sent (validated again at each start). */
export const ADDED_CAMERAS = 'cameras.added';

/** Fields a camera added from the dashboard may have (a subset of a configured camera's). */
const ADDED_KEYS = ['id', 'name', 'source', 'size', 'learnSeconds', 'sampleSeconds', 'zones'];
const ADDED_KINDS = ['snapshot', 'mjpeg'];

/**
 * The stored added cameras, validated as the configuration's; one whose id the configuration file
 * uses, or that no longer validates, is left out with a log line (and kept in the database).
 */
export function storedCameras(store: Pick<Store, 'getSetting'>, config: Pick<ResiduumConfig, 'cameras' | 'file'>, log: Log): CameraConfig[] {
  const taken = new Set(config.cameras.map((c) => c.id));
  const out: CameraConfig[] = [];
  for (const [i, raw] of storedList(store).entries()) {
    try {
      const camera = validateCameraConfig(raw, { file: 'database', at: `${ADDED_CAMERAS}[${i}]`, base: dirname(resolve(config.file)) });
      if (taken.has(camera.id)) {
        log(`camera ${camera.id}: added from the dashboard, but the configuration file has a camera of that id too; the file's is used`, 'warn');
        continue;
      }
      taken.add(camera.id);
      out.push(camera);
    } catch (error) {
      log(`a camera added from the dashboard is left out: ${(error as Error).message}`, 'error');
    }
  }
  return out;
}

export interface CameraAdminOptions {
  readonly store: Store;
  /** Ids of the configuration file's cameras (not removable here). */
  readonly configIds: ReadonlySet<string>;
  /** The running cameras, by id (shared with the service; added and removed here). */
  readonly hosts: Map<string, CameraHost>;
  /** The cameras' configurations (shared with the service; added and removed here). */
  readonly cameras: CameraConfig[];
  /** The service's control: the new camera's `live` and `learn` are forwarded to it. */
  readonly control: ServiceControl;
  /** Folder that relative paths resolve against (the configuration file's). */
  readonly base: string;
  /** Stores the camera and its zones, starts its worker and adds it to `hosts` (the service's own start path). */
  start(camera: CameraConfig): Promise<CameraHost>;
  /** Checks a source; default probeSource with a 15 s limit. */
  readonly probe?: (source: CameraSourceDescription) => Promise<ProbeResult>;
  readonly log?: Log;
}

/** addCamera and removeCamera of the ServiceControl. */
export function cameraAdmin(options: CameraAdminOptions): Pick<Required<ServiceControl>, 'addCamera' | 'removeCamera'> {
  const { store, configIds, hosts, cameras, control, base, start, probe = (s) => probeSource(s), log = () => {} } = options;
  /** One change at a time (two quick adds of one id must not both pass the check). */
  let busy: Promise<unknown> = Promise.resolve();
  const serial = <T>(work: () => Promise<T>): Promise<T> => {
    const next = busy.then(work, work);
    busy = next.catch(() => undefined);
    return next;
  };

  async function add(raw: unknown, by: string): Promise<AddedCamera> {
    const fail = (message: string) => new CameraSetupError(400, `request body: ${message}`);
    if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) throw fail('must be a JSON object { id, name, source: { kind, url } }');
    const body = raw as Record<string, unknown>;
    for (const key of Object.keys(body)) if (!ADDED_KEYS.includes(key)) throw fail(`${key} is not expected here (known: ${ADDED_KEYS.join(', ')})`);
    const kind = (body.source as { kind?: unknown } | undefined)?.kind;
    if (typeof kind !== 'string' || !ADDED_KINDS.includes(kind)) {
      throw fail(`source.kind must be snapshot (a picture URL polled) or mjpeg (an MJPEG stream URL), got ${JSON.stringify(kind) ?? 'nothing'}; other kinds of source go in the configuration file`);
    }
    let camera = validate(body);
    if (hosts.has(camera.id)) throw new CameraSetupError(409, `request body: id "${camera.id}" is already a camera here`);
    let chosen: Record<string, unknown> = body;
    let seen: ProbeResult;
    try {
      seen = await probe(camera.source);
    } catch (error) {
      if (!(error instanceof SourceProbeError)) throw error;
      const size = error.sourceSize && body.size === undefined ? workingSize(error.sourceSize.width, error.sourceSize.height) : undefined;
      if (!size) throw fail(`source.url gives no usable picture: ${error.reason}${sizeHint(error.sourceSize)}`);
      // No size was asked for: take the camera's shape (long side 320, as `learn` does) and check again.
      chosen = { ...body, size: [size.width, size.height] };
      camera = validate(chosen);
      try {
        seen = await probe(camera.source);
      } catch (again) {
        if (again instanceof SourceProbeError) throw fail(`source.url gives no usable picture: ${again.reason}`);
        throw again;
      }
    }
    const list = storedList(store);
    store.setSetting(ADDED_CAMERAS, [...list, chosen]);
    cameras.push(camera);
    let host: CameraHost;
    try {
      host = await start(camera);
      host.on('live', (live) => control.emit('live', live));
      host.on('learn', (status) => control.emit('learn', { camera: camera.id, status }));
      await host.ready();
    } catch (error) {
      // Nothing half-added stays behind.
      store.setSetting(ADDED_CAMERAS, storedList(store).filter((c) => (c as { id?: unknown })?.id !== camera.id));
      cameras.splice(cameras.findIndex((c) => c.id === camera.id), 1);
      const h = hosts.get(camera.id);
      hosts.delete(camera.id);
      await h?.stop();
      throw new CameraSetupError(400, `request body: the camera could not be started: ${(error as Error).message}`);
    }
    const url = 'url' in camera.source ? redactUrl(camera.source.url) : '';
    try {
      store.insertEvent({ camera: camera.id, type: 'settings-changed', detail: { what: 'camera-added', by, kind: camera.source.kind, url, size: [camera.source.size.width, camera.source.size.height] } });
    } catch {
      // the stored camera is the record
    }
    log(`camera ${camera.id}: added by the ${by} (${camera.source.kind} ${url}, ${camera.source.size.width}×${camera.source.size.height})`);
    return {
      id: camera.id,
      name: camera.name,
      kind: camera.source.kind,
      url,
      size: [camera.source.size.width, camera.source.size.height],
      ...(seen.sourceSize && { sourceSize: [seen.sourceSize.width, seen.sourceSize.height] }),
      learnSeconds: camera.learnSeconds,
      state: host.live().state,
    };
  }

  function validate(body: Record<string, unknown>): CameraConfig {
    try {
      return validateCameraConfig(body, { file: 'request body', at: 'camera', base });
    } catch (error) {
      if (error instanceof ConfigError) throw new CameraSetupError(400, error.message.replace(/^request body: camera\./, 'request body: '));
      throw error;
    }
  }

  async function remove(id: string, by: string): Promise<void> {
    if (configIds.has(id)) throw new CameraSetupError(409, `camera "${id}" comes from the configuration file; remove it there`);
    const host = hosts.get(id);
    if (!host) throw new CameraSetupError(404, `no camera "${id}"`);
    store.setSetting(ADDED_CAMERAS, storedList(store).filter((c) => (c as { id?: unknown })?.id !== id));
    hosts.delete(id);
    const at = cameras.findIndex((c) => c.id === id);
    if (at >= 0) cameras.splice(at, 1);
    await host.stop();
    try {
      store.insertEvent({ camera: id, type: 'settings-changed', detail: { what: 'camera-removed', by } });
    } catch {
      // the settings are the record
    }
    log(`camera ${id}: removed by the ${by}; its stored counts are kept`);
  }

  return {
    addCamera: (raw: unknown, by: string) => serial(() => add(raw, by)),
    removeCamera: (id: string, by: string) => serial(() => remove(id, by)),
  };
}

function storedList(store: Pick<Store, 'getSetting'>): unknown[] {
  const list = store.getSetting(ADDED_CAMERAS);
  return Array.isArray(list) ? list : [];
}

/** ` (the camera sends 1280×720 pictures: send size [320, 180])` for an aspect refusal, else ''. */
function sizeHint(source: Size | undefined): string {
  if (!source) return '';
  const fit = workingSize(source.width, source.height);
  return ` (the camera sends ${source.width}×${source.height} pictures: send size [${fit.width}, ${fit.height}] or leave size out)`;
}
