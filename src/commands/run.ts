import { createHash } from 'node:crypto';
import { EventEmitter } from 'node:events';
import { readFile } from 'node:fs/promises';
import type { Server } from 'node:http';
import { chmodSync, mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { loadConfig, type CameraConfig, type ResiduumConfig } from '../config/loadConfig.ts';
import { createCameraHost, type CameraHost } from '../counting/cameraHost.ts';
import { prepareWorkers } from '../counting/startWorker.ts';
import { createShadowRoom } from '../frames/synthetic/shadowRoom.ts';
import type { ChromaticityModel } from '../vision/chromaticityModel.ts';
import { fitChromaticity } from '../vision/fitChromaticity.ts';
import type { WorkerFault } from '../counting/cameraWorkerProtocol.ts';
import { learnInWorker } from '../counting/learnInWorker.ts';
import { createMetrics, type Metrics } from '../outputs/metrics.ts';
import { createMqttPublisher } from '../outputs/mqtt/mqttPublisher.ts';
import { reportingStore } from '../store/reportingStore.ts';
import { siteSlug } from '../outputs/mqtt/topics.ts';
import { startAlerts, type AlertService, type StartAlertsOptions } from '../outputs/alerts/startAlerts.ts';
import { readDisplaySettings } from '../server/displaySettings.ts';
import { cameraAdmin, storedCameras } from './addedCameras.ts';
import { liveView } from '../server/liveView.ts';
import { decodeModel, encodeModel, loadModel } from '../counting/modelFile.ts';
import { modelVerdict } from '../counting/modelVerdict.ts';
import { fitStoredCalibration } from '../counting/zoneCalibration.ts';
import { storedVerdict, storeModel, type StoredVerdict } from '../counting/storeModel.ts';
import type { BackoffOptions } from '../frames/live/backoff.ts';
import { createScene } from '../frames/synthetic/index.ts';
import { createApp } from '../server/createApp.ts';
import { ModelChoiceError, type KeptModel, type ServiceControl, type SmallImage } from '../server/serviceControl.ts';
import { adminKeyFromEnvironment, prepareTokens, tokenNotice, type NewTokens } from '../server/tokens.ts';
import { validateZones } from '../counting/parseZones.ts';
import type { Zone } from '../domain/zone.ts';
import { describeZoneChange, reconcileZones } from '../config/reconcileZones.ts';
import { openStore, type ModelInfo, type Store } from '../store/index.ts';
import type { Subspace } from '../vision/subspace.ts';
import { numberOption, parseOptions, requireOption } from './args.ts';
import { configSecrets, createServiceLog, LOG_OPTIONS, LOG_USAGE, logSettings, type ServiceLog } from './serviceLog.ts';
import type { Log } from '../domain/log.ts';

export const runUsage = `residuum run --config <file> [--data <folder>] [--port N] [--reset-token] [--log-level L] [--log-format F]

Runs the counting service: reads every configured camera, counts per zone, stores samples and
hourly rollups in <data>/residuum.db, and serves the JSON API on the configured host and port.
  --config  the configuration file (YAML; see config/demo.yaml and README)
  --data    folder of the database (default ./data)
  --port    HTTP port (default: server.port of the configuration, else 8080; 0 = any free port)
  --reset-token  make a new admin key (and view key) and print it once; the old one stops working
${LOG_USAGE}`;

/** A running service: its parts and how to stop it. */
export interface RunningService {
  /** The main thread's connection to the database (each camera's worker has its own). */
  readonly store: Store;
  /** Each camera's worker thread, by camera id. */
  readonly cameras: ReadonlyMap<string, CameraHost>;
  readonly control: ServiceControl;
  readonly metrics: Metrics;
  readonly server: Server;
  readonly port: number;
  /** Keys made at this start (first start, or --reset-token), to show once; empty otherwise. */
  readonly newTokens: NewTokens;
  /** Alerts by webhook and e-mail, when the configuration has an `alerts` section. */
  readonly alerts?: AlertService;
  stop(): Promise<void>;
}

/** `residuum run`: starts the service and runs until SIGINT or SIGTERM. */
export async function runCommand(argv: string[]): Promise<number> {
  const v = parseOptions(argv, { config: { type: 'string' }, data: { type: 'string' }, port: { type: 'string' }, 'reset-token': { type: 'boolean' }, ...LOG_OPTIONS });
  const configFile = requireOption(v.config, 'config', 'the configuration file');
  const port = numberOption(v.port, 'port', { min: 0, max: 65535, integer: true });
  const serviceLog = createServiceLog(logSettings(v));
  const { log } = serviceLog;
  const dataDir = v.data ?? 'data';
  const service = await logFatal(log, async () => {
    const config = loadConfig(configFile);
    for (const secret of configSecrets(config)) serviceLog.hide(secret);
    serviceLog.hide(adminKeyFromEnvironment());
    return { config, running: await startService(config, { dataDir, port, log, resetToken: v['reset-token'] === true }) };
  });
  const { config, running } = service;
  announceNewTokens(running.newTokens, { dataDir, out: process.stdout, serviceLog });
  log(`serving the API at http://${config.server.host}:${running.port}/api/live`);
  log(`dashboard at http://${config.server.host}:${running.port}/`);
  await runUntilSignal(running, log);
  return 0;
}

/**
 * Runs the start of a long-running command; a failure is logged at level fatal (so that the log
 * collector sees why the service is gone) and thrown on, for the command line to print and exit 1.
 */
export async function logFatal<T>(log: Log, start: () => Promise<T>): Promise<T> {
  try {
    return await start();
  } catch (error) {
    log(`cannot start: ${(error as Error)?.message ?? String(error)}`, 'fatal');
    throw error;
  }
}

/** Keeps a started service running until SIGINT or SIGTERM, then stops it cleanly. */
export async function runUntilSignal(service: RunningService, log: Log): Promise<void> {
  await new Promise<void>((done) => {
    const stop = () => done();
    process.once('SIGINT', stop);
    process.once('SIGTERM', stop);
  });
  log('stopping');
  await service.stop();
  log('stopped');
}

/**
 * Shows keys made at this start with {@link showNewTokens}, after telling the log never to write
 * them: on a terminal the keys are printed as they are (not a log line); otherwise the line saying
 * which file holds them is logged (level warn: someone must fetch and delete the file).
 */
export function announceNewTokens(tokens: NewTokens, options: { dataDir: string; out: { write(text: string): unknown; isTTY?: boolean }; serviceLog: Pick<ServiceLog, 'hide' | 'log'> }): void {
  const { dataDir, out, serviceLog } = options;
  serviceLog.hide(tokens.admin);
  serviceLog.hide(tokens.view);
  const notice = showNewTokens(tokens, { dataDir, out });
  if (notice === '') return;
  if (out.isTTY === true) out.write(notice);
  else serviceLog.log(notice.trim(), 'warn', { component: 'keys' });
}

/** The file new keys are written to when standard output is not a terminal. */
export const NEW_KEYS_FILE = 'new-keys.txt';

/**
 * Shows keys made at this start once: on standard output when it is a terminal; otherwise (the
 * output goes to a log, a pipe, a journal) written to `<data>/new-keys.txt`, readable by this user
 * only (mode 0600), and the returned line says where — so that a key never lands in a log that is
 * collected. Returns what to print on standard output.
 */
export function showNewTokens(tokens: NewTokens, options: { dataDir: string; out: { isTTY?: boolean } }): string {
  const notice = tokenNotice(tokens);
  if (notice === '' || options.out.isTTY === true) return notice;
  // The collector on PostgreSQL has no database in this folder: make it as openStore would.
  mkdirSync(resolve(options.dataDir), { recursive: true, mode: 0o700 });
  const file = join(resolve(options.dataDir), NEW_KEYS_FILE);
  writeFileSync(file, `${new Date().toISOString()}\n${notice}`, { mode: 0o600 });
  // An older file keeps its mode on rewrite: make sure.
  chmodSync(file, 0o600);
  return `New ${tokens.view ? 'keys were' : 'admin key was'} written to ${file} (readable by this user only, as standard output is not a terminal); read it, then delete the file.\n`;
}

export interface StartServiceOptions {
  /** Where RESIDUUM_ADMIN_KEY_FILE is read (adminKeyFromEnvironment); default process.env. */
  readonly env?: Readonly<Record<string, string | undefined>>;
  /** Folder of residuum.db. */
  readonly dataDir: string;
  /** Overrides config.server.port. */
  readonly port?: number;
  readonly log?: Log;
  /** Replace the admin (and view) key with new ones; default false. */
  readonly resetToken?: boolean;
  /** Delays before a failed camera worker is started again; default 1 s doubling to 60 s, full jitter. */
  readonly workerRestart?: BackoffOptions;
  /** A camera worker that sent nothing (not even its 1 s heartbeat) for this long is restarted, ms; 0 = never; default 30 000. */
  readonly workerStallMs?: number;
  /**
   * Largest young generation of each camera worker's heap, MB, ≥ 1 (see
   * CameraHostOptions.youngGenerationMb); default 8. In the 200 000-frame soak this kept resident
   * memory some 80 MB lower and level, at the same frame rate, against V8's own sizing.
   */
  readonly workerYoungGenerationMb?: number;
  /** Tests and the soak benchmark only: a fault to simulate, by camera id (see WorkerFault); default none. */
  readonly workerFaults?: Readonly<Record<string, WorkerFault>>;
  /** Tests only: how often alerts look at the live view and how long they wait between retries (see StartAlertsOptions). */
  readonly alerts?: Pick<StartAlertsOptions, 'checkMs' | 'retryBackoff'>;
}

/**
 * Starts everything the configuration describes. The configuration is validated before the
 * database is opened, so a bad file changes nothing.
 *
 * Threads: each camera runs in its own worker thread (src/counting/cameraHost.ts,
 * cameraWorker.ts): its source, decoding, counting, and the writes of its samples, events and
 * learned models through its own database connection. The main thread keeps the HTTP server and
 * live stream, MQTT, metrics, settings and zone writes, retention, and the events of failed
 * workers. A worker that crashes, exits or hangs makes its camera `offline` (event and log line)
 * and is started again with backoff; the other cameras keep counting.
 */
export async function startService(config: ResiduumConfig, options: StartServiceOptions): Promise<RunningService> {
  const { dataDir, log = () => {}, workerRestart = {}, workerStallMs = 30_000, workerYoungGenerationMb = 8, workerFaults = {} } = options;
  const keepModels = config.models?.keep ?? 5;
  // Before the database is opened: a bad key file changes nothing.
  const adminKey = adminKeyFromEnvironment(options.env);
  const dbFile = join(resolve(dataDir), 'residuum.db');
  const store = openStore(dbFile, { timeZone: config.site.timeZone });
  const configIds = new Set(config.cameras.map((c) => c.id));
  // Cameras added from the dashboard (kept in the database) run beside the configured ones.
  config = { ...config, cameras: [...config.cameras, ...storedCameras(store, config, log)] };
  const cameraList = [...config.cameras];
  let startCamera: ((camera: CameraConfig, chosen?: CameraModel) => CameraHost) | undefined;
  const hosts = new Map<string, CameraHost>();
  let retention: NodeJS.Timeout | undefined;
  // MQTT is best-effort after the database: samples and events are published once committed.
  const mqtt = config.mqtt && createMqttPublisher(config.mqtt, { site: config.mqtt.site ?? siteSlug(config.site.name), store, log });
  const metrics = createMetrics({
    ...(mqtt && { mqtt: () => mqtt.stats() }),
    threadUtilization: () => [...hosts.values()].map((h) => [h.id, h.utilization()] as const),
    threadHeap: () => [...hosts.values()].map((h) => [h.id, h.heap()] as const),
  });
  // The main thread's own events (a camera's worker failed) go to MQTT too.
  const mainEvents = mqtt ? reportingStore(store, mqtt, log) : store;
  const quietly = (what: string, publish: () => void) => {
    try {
      publish();
    } catch (error) {
      log(`mqtt: could not queue ${what} (${(error as Error).message})`, 'error');
    }
  };
  const stopCameras = () => Promise.all([...hosts.values()].map((h) => h.stop()));
  try {
    // Each worker loads one prebuilt file (built now if a source changed), or, when that cannot be built, its sources through tsx.
    const workers = await prepareWorkers();
    if ('loader' in workers) log(`camera workers load their TypeScript sources through tsx (some 40 MB more per camera): ${workers.loader}`);
    // The zones counted are the database's (see applyConfigZones), not necessarily the file's.
    const cameras = config.cameras.map((camera) => {
      store.upsertCamera({ id: camera.id, name: camera.name });
      return { ...camera, zones: applyConfigZones(store, camera, config.file, log) };
    });
    const models = new Map<string, CameraModel | undefined>();
    for (const camera of config.cameras) {
      models.set(camera.id, await cameraModel(camera, store, keepModels, log));
      // A lowered models.keep applies at once.
      const pruned = store.pruneModels(camera.id, keepModels);
      if (pruned.length > 0) log(`camera ${camera.id}: deleted ${pruned.length} older model${pruned.length === 1 ? '' : 's'} (models.keep is ${keepModels})`);
    }
    startCamera = (camera: CameraConfig, chosen = models.get(camera.id)): CameraHost => {
      const fault = workerFaults[camera.id];
      const host = createCameraHost({
        camera,
        dbFile,
        timeZone: store.timeZone,
        ...(chosen && { model: chosen.model, ...(chosen.id !== undefined && { modelId: chosen.id }) }),
        keepModels,
        events: mainEvents,
        relayCommits: mqtt !== undefined,
        log,
        restartBackoff: workerRestart,
        stallMs: workerStallMs,
        youngGenerationMb: workerYoungGenerationMb,
        ...(fault && { fault }),
      });
      hosts.set(camera.id, host);
      host.on('stage', (stage: string, seconds: number) => {
        try {
          metrics.observeStage(stage, seconds);
        } catch (error) {
          log(`camera ${camera.id}: a stage timing was not recorded (${(error as Error).message})`, 'warn');
        }
      });
      host.on('live', (live) => {
        mqtt?.publishLive(live);
        metrics.observeLive(live);
      });
      host.on('sourceError', () => metrics.sourceError(camera.id));
      host.on('restart', () => metrics.workerRestart(camera.id));
      if (mqtt) {
        host.on('sample', (sample) => quietly('a sample', () => mqtt.publishSample(sample)));
        host.on('event', (event) => quietly('an event', () => mqtt.publishEvent(event)));
      }
      log(`camera ${camera.id}: started (${camera.source.kind}, ${camera.zones.length} zone${camera.zones.length === 1 ? '' : 's'}) in its own thread`);
      return host;
    };
    for (const camera of cameras) startCamera(camera);
    await Promise.all([...hosts.values()].map((h) => h.ready()));
    const prune = () => {
      const { deleted, rollupsDeleted = 0 } = store.applyRetention({
        sampleDays: config.storage.sampleRetentionDays,
        ...(config.storage.rollupRetentionDays !== undefined && { rollupDays: config.storage.rollupRetentionDays }),
      });
      if (deleted > 0) log(`retention: deleted ${deleted} samples older than ${config.storage.sampleRetentionDays} days`);
      if (rollupsDeleted > 0) log(`retention: deleted ${rollupsDeleted} rollup rows older than ${config.storage.rollupRetentionDays} days`);
    };
    prune();
    retention = setInterval(prune, 3_600_000);
    retention.unref();
  } catch (error) {
    clearInterval(retention);
    await stopCameras();
    await mqtt?.stop();
    store.close();
    throw error;
  }
  const control = serviceControl(store, mainEvents, hosts, cameraList);
  Object.assign(
    control,
    cameraAdmin({
      store,
      configIds,
      hosts,
      cameras: cameraList,
      control,
      base: dirname(resolve(config.file)),
      log,
      async start(camera) {
        store.upsertCamera({ id: camera.id, name: camera.name });
        for (const zone of camera.zones) store.upsertZone(camera.id, zone);
        return startCamera!(camera, await cameraModel(camera, store, keepModels, log));
      },
    }),
  );
  const app = createApp({
    store,
    control,
    live: () => [...hosts.values()].map((h) => h.live()),
    siteName: config.site.name,
    timeZone: config.site.timeZone,
    startedAt: Date.now(),
    viewTokenRequired: config.server.viewToken,
    sampleRetentionDays: config.storage.sampleRetentionDays,
    host: config.server.host,
    metrics,
    log,
  });
  const port = options.port ?? config.server.port;
  let server: Server;
  try {
    // Express 5 hands a listen error (EADDRINUSE…) to this callback instead of throwing.
    server = await new Promise<Server>((done, fail) => {
      const s = app.listen(port, config.server.host, (error?: Error) => (error ? fail(error) : done(s)));
    });
  } catch (error) {
    clearInterval(retention);
    await stopCameras();
    await mqtt?.stop();
    store.close();
    throw new Error(`server: cannot listen on ${config.server.host}:${port} (${(error as Error).message})`, { cause: error });
  }
  const address = server.address();
  // After listening succeeded, so that a key is never made without being shown.
  const newTokens = prepareTokens(store, { viewToken: config.server.viewToken, reset: options.resetToken === true, ...(adminKey !== undefined && { adminKey }) });
  // Alerts look at the same live view as the dashboard (levels, low-stock marks, camera status).
  const alerts: AlertService | undefined =
    config.alerts &&
    startAlerts({
      settings: config.alerts,
      site: config.site.name,
      events: mainEvents,
      log,
      observe: () => liveView([...hosts.values()].map((h) => h.live()), readDisplaySettings(store)).cameras,
      ...options.alerts,
    });
  return {
    newTokens,
    ...(alerts && { alerts }),
    store,
    cameras: hosts,
    server,
    control,
    metrics,
    port: typeof address === 'object' && address ? address.port : 0,
    async stop() {
      if (retention) clearInterval(retention);
      await alerts?.stop();
      await stopCameras();
      await mqtt?.stop();
      server.closeAllConnections();
      await new Promise<void>((done) => server.close(() => done()));
      store.close();
    },
  };
}

/** Settings key of the configured model file (name and SHA-256 of its content) at the last start. */
export function configModelSetting(camera: string): string {
  return `config.model.${camera}`;
}

/** Settings key of what the configuration file said about a camera's zones at the last start. */
export function configZonesSetting(camera: string): string {
  return `config.zones.${camera}`;
}

/**
 * Puts the camera's zones in the database by the rule of {@link reconcileZones}: the file seeds
 * them the first time; afterwards the database's zones (the dashboard's edits) are kept and only
 * what changed in the file since the last start is applied, with a `settings-changed` event and a
 * log line naming each change. One transaction: the zones, the record of the file and the event.
 */
function applyConfigZones(store: Store, camera: CameraConfig, file: string, log: Log): Zone[] {
  const key = configZonesSetting(camera.id);
  const tx = store.db.transaction(() => {
    const recorded = store.getSetting(key);
    const lastConfig = Array.isArray(recorded) ? (recorded as Zone[]) : undefined;
    const stored = store.listZones({ camera: camera.id }).map((r) => r.zone);
    const { zones, changes, basis } = reconcileZones({ config: camera.zones, lastConfig, stored });
    let valid: Zone[];
    try {
      valid = validateZones(zones, `camera ${camera.id}`, 'zones');
    } catch (error) {
      // A file change that does not fit the dashboard's zones (e.g. a person size next to reference
      // people): the file's zones are taken as they are, and the event says so.
      log(`camera ${camera.id}: the configuration's changes do not fit the zones saved in the dashboard (${(error as Error).message}); using the configuration's zones`, 'warn');
      valid = camera.zones.map((z) => ({ ...z }));
    }
    const keep = new Set(valid.map((z) => z.id));
    for (const zone of valid) store.upsertZone(camera.id, zone);
    for (const old of store.listZones({ camera: camera.id })) if (!keep.has(old.zone.id)) store.removeZone(camera.id, old.zone.id);
    store.setSetting(key, camera.zones);
    if (basis === 'seeded') log(`camera ${camera.id}: zones taken from ${file} (first start)`);
    if (changes.length > 0) {
      const text = `The configuration file ${file} changed since the last start: ${changes.map(describeZoneChange).join('; ')}.`;
      store.insertEvent({ camera: camera.id, type: 'settings-changed', detail: { what: 'zones', by: 'configuration', file, changes, text } });
      log(`camera ${camera.id}: ${text}`);
    }
    return valid;
  });
  return tx.immediate();
}

/** A camera's model at start and its stored id (undefined when it could not be stored). */
interface CameraModel {
  readonly model: Subspace;
  readonly id?: number;
}

/** The model with its colour statistics in `colour` (as the pipeline takes it). */
function withColour({ model, colour }: { model: Subspace; colour?: ChromaticityModel }): Subspace {
  return colour ? { ...model, colour } : model;
}

/**
 * The camera's empty-scene model: the configured model file (it becomes the active model at every
 * start; stored when no kept model has the same content), else the camera's active stored one,
 * else — for a synthetic scene — one learned from its empty frames. Undefined means: learn from
 * the live source at start. Storing keeps at most `keep` models per camera.
 */
async function cameraModel(camera: CameraConfig, store: Store, keep: number, log: Log): Promise<CameraModel | undefined> {
  const { width, height } = camera.source.size;
  const check = (model: Subspace, from: string) => {
    if (model.width !== width || model.height !== height) {
      throw new Error(`camera ${camera.id}: the model from ${from} is ${model.width}×${model.height} but cameras[].size is ${width}×${height}; set size to match or learn again`);
    }
    return model;
  };
  // The configured model file is put to use when it is new to this database or the file (its
  // name or content) changed since the last start; otherwise the model in use stays, so that the
  // admin's choice in the dashboard survives restarts (the same rule as for zones).
  if (camera.model) {
    const key = configModelSetting(camera.id);
    const digest = createHash('sha256').update(await readFile(camera.model).catch(() => Buffer.alloc(0))).digest('hex');
    const recorded = store.getSetting(key) as { file?: unknown; sha256?: unknown } | undefined;
    const unchanged = recorded?.file === camera.model && recorded?.sha256 === digest && store.activeModelId(camera.id) !== undefined;
    if (!unchanged) {
      const model = check(withColour(await loadModel(camera.model)), camera.model);
      const same = keptCopy(store, camera.id, camera.model, model);
      let id = same;
      if (same !== undefined) {
        if (store.activeModelId(camera.id) !== same) store.activateModel(camera.id, same);
      } else {
        id = storeModel(store, camera.id, model, camera.model, { keep });
      }
      store.setSetting(key, { file: camera.model, sha256: digest });
      if (recorded !== undefined) log(`camera ${camera.id}: the model file ${camera.model} changed since the last start; put to use`);
      return { model, ...(id !== undefined && { id }) };
    }
  }
  const stored = store.activeModel(camera.id);
  if (stored) return { model: check(withColour(decodeModel(Buffer.from(stored.data), `stored model ${stored.id}`)), 'the database'), id: stored.id };
  if (camera.source.kind === 'synthetic') {
    const sceneOptions = { width, height, ...(camera.source.seed !== undefined && { seed: camera.source.seed }) };
    const period = 3000;
    const times = Array.from({ length: 200 }, (_, i) => Math.floor((i * period) / 200));
    let model: Subspace;
    if (camera.source.scene === 'shadow-room') {
      // The reading room in colour: its colour statistics are learned from the same empty frames.
      const scene = createShadowRoom(sceneOptions);
      const empty = times.map((t) => scene.emptyColourFrameAt(t));
      const colour = fitChromaticity(empty.map((e) => e.colour.data), { width, height });
      model = { ...(await learnInWorker(empty.map((e) => e.frame.data), { width, height })), ...(camera.source.colour && { colour }) };
    } else {
      const scene = createScene(camera.source.scene, sceneOptions);
      model = await learnInWorker(times.map((t) => scene.emptyFrameAt(t).data), { width, height });
    }
    const id = storeModel(store, camera.id, model, `synthetic:${camera.source.scene}:empty`, { keep });
    log(`camera ${camera.id}: learned the empty synthetic scene (${model.components} components, ${modelVerdict(model).level})`);
    return { model, id };
  }
  log(`camera ${camera.id}: no model yet; learning from the first ${camera.learnSeconds} s of frames — keep the view empty`);
  return undefined;
}

/** The id of a kept model stored from `file` with the same content as `model`, if any. */
function keptCopy(store: Store, camera: string, file: string, model: Subspace): number | undefined {
  const bytes = encodeModel(model, {}, model.colour);
  for (const info of store.listModels(camera).reverse()) {
    if ((info.metadata as { source?: unknown } | null)?.source !== file) continue;
    const record = store.getModel(info.id);
    if (!record) continue;
    try {
      const kept = withColour(decodeModel(Buffer.from(record.data), `stored model ${info.id}`));
      if (encodeModel(kept, {}, kept.colour).equals(bytes)) return info.id;
    } catch {
      // an unreadable kept model is no copy of the file
    }
  }
  return undefined;
}

/** The service as the HTTP layer sees it (see ServiceControl). */
function serviceControl(store: Store, events: Pick<Store, 'insertEvent'>, hosts: ReadonlyMap<string, CameraHost>, cameras: readonly CameraConfig[]): ServiceControl {
  const control = new EventEmitter() as ServiceControl;
  /** Verdicts of kept models by id (models stored before their findings were kept are decoded once). */
  const verdicts = new Map<number, StoredVerdict>();
  const kept = (info: ModelInfo): KeptModel => {
    let verdict = verdicts.get(info.id);
    if (!verdict) {
      verdict = storedVerdict(info, () => store.getModel(info.id)?.data);
      verdicts.set(info.id, verdict);
    }
    const m = (info.metadata ?? {}) as { frames?: unknown; source?: unknown };
    return {
      id: info.id,
      learnedAt: info.created,
      frames: typeof m.frames === 'number' ? m.frames : null,
      components: info.components,
      width: info.width,
      height: info.height,
      source: typeof m.source === 'string' ? m.source : null,
      verdict,
      active: info.active,
      rejected: info.rejected,
    };
  };
  const host = (camera: string) => {
    const h = hosts.get(camera);
    if (!h) throw new RangeError(`no camera "${camera}"`);
    return h;
  };
  for (const [camera, h] of hosts) {
    h.on('live', (live) => control.emit('live', live));
    h.on('learn', (status) => control.emit('learn', { camera, status }));
  }
  Object.assign(control, {
    cameras: () => [...hosts.values()].map((h) => h.live()),
    zones: (camera: string) => hosts.get(camera)?.zones(),
    setZones(camera: string, raw: unknown) {
      const h = host(camera);
      const zones = validateZones(raw, 'request body', 'zones');
      const keep = new Set(zones.map((z) => z.id));
      const tx = store.db.transaction(() => {
        for (const zone of zones) store.upsertZone(camera, zone);
        for (const old of store.listZones({ camera })) if (!keep.has(old.zone.id)) store.removeZone(camera, old.zone.id);
      });
      // IMMEDIATE: take the write lock first (waiting up to busy_timeout for the camera threads'
      // writes). A deferred transaction that read first and then wrote would fail at once with
      // SQLITE_BUSY whenever a camera thread committed in between (WAL: the read snapshot is stale).
      tx.immediate();
      h.setZones(zones);
      return zones;
    },
    background(camera: string): SmallImage | undefined {
      const model = host(camera).model();
      if (!model) return undefined;
      return { width: model.width, height: model.height, data: Uint8Array.from(model.mean, (v) => Math.max(0, Math.min(255, Math.round(v)))) };
    },
    modelSummary(camera: string) {
      const model = host(camera).model();
      if (!model) return undefined;
      const id = host(camera).modelId();
      return { ...(id !== undefined && { id }), width: model.width, height: model.height, components: model.components, retainedVariance: model.retainedVariance, frames: model.frameCount, verdict: modelVerdict(model) };
    },
    maskPreview(camera: string, cell = 8): SmallImage | undefined {
      const mask = host(camera).lastMask();
      if (!mask) return undefined;
      if (!(Number.isInteger(cell) && cell >= 8 && cell <= 32)) throw new RangeError(`cell must be a whole number from 8 to 32, got ${cell}`);
      const width = Math.ceil(mask.width / cell);
      const height = Math.ceil(mask.height / cell);
      const data = new Uint8Array(width * height);
      for (let y = 0; y < mask.height; y++) for (let x = 0; x < mask.width; x++) if (mask.data[y * mask.width + x]) data[Math.floor(y / cell) * width + Math.floor(x / cell)] = 1;
      return { width, height, data };
    },
    learn: (camera: string, seconds: number) => host(camera).relearn(seconds),
    learnStatus: (camera: string) => hosts.get(camera)?.learnStatus(),
    models(camera: string) {
      if (!hosts.has(camera)) return undefined;
      const list = store.listModels(camera);
      // Forget verdicts of models deleted since (bounded by what is kept).
      for (const id of verdicts.keys()) if (!list.some((m) => m.id === id)) verdicts.delete(id);
      return list.reverse().map(kept);
    },
    activateModel(camera: string, id: number, by: string) {
      const h = host(camera);
      const record = Number.isSafeInteger(id) && id >= 1 ? store.getModel(id) : undefined;
      if (!record || record.camera !== camera) return undefined;
      const size = cameras.find((c) => c.id === camera)!.source.size;
      if (record.width !== size.width || record.height !== size.height) {
        throw new ModelChoiceError(`model ${id} was learned at ${record.width}×${record.height} but camera ${camera} works at ${size.width}×${size.height}`);
      }
      let model: Subspace;
      try {
        model = withColour(decodeModel(Buffer.from(record.data), `stored model ${id}`));
      } catch (error) {
        throw new ModelChoiceError(`model ${id} cannot be read (${(error as Error).message})`);
      }
      const previous = store.activeModelId(camera);
      const changed = previous !== id || h.modelId() !== id;
      if (previous !== id) {
        store.activateModel(camera, id);
        const { level } = kept(record).verdict;
        try {
          events.insertEvent({
            camera,
            type: 'model-activated',
            detail: {
              model: id,
              by,
              previous: previous ?? null,
              learnedAt: record.created,
              level,
              text: `Model ${id}, learned ${new Date(record.created).toISOString()}, was put to use by the ${by}${previous === undefined ? '' : ` instead of model ${previous}`}.`,
            },
          });
        } catch {
          // the active model is the record; an event that cannot be stored does not undo the change
        }
      }
      if (changed) h.useModel(model, id);
      const info = store.listModels(camera).find((m) => m.id === id)!;
      return { model: kept(info), changed };
    },
    calibration(camera: string, zone?: string) {
      const h = hosts.get(camera);
      if (!h) return undefined;
      const threshold = cameras.find((c) => c.id === camera)!.threshold;
      return h.zones().filter((z) => z.kind === 'room' && (zone === undefined || z.id === zone)).map((z) => fitStoredCalibration(store, camera, z, threshold).status);
    },
    calibrate: (camera: string, zone: string, count: number, by: string) => host(camera).calibrate(zone, count, by),
    clearCalibration(camera: string, zone: string, by: string) {
      const h = host(camera);
      const removed = store.clearCalibrationPoints(camera, zone);
      if (removed > 0) {
        try {
          events.insertEvent({ camera, zone, type: 'calibration-cleared', detail: { removed, by } });
        } catch {
          // the points are gone either way
        }
        h.calibrationChanged();
      }
      return removed;
    },
  });
  return control;
}
