import type { Server } from 'node:http';
import { join, resolve } from 'node:path';
import { loadCollectorConfig } from '../outputs/mqtt/collectorConfig.ts';
import { sqliteCollectorStore } from '../store/collectorStore.ts';
import { startCollector, type Collector } from '../outputs/mqtt/mqttCollector.ts';
import { readMqttTls } from '../outputs/mqtt/mqttSettings.ts';
import { createApp } from '../server/createApp.ts';
import { adminKeyFromEnvironment, prepareTokens } from '../server/tokens.ts';
import { openStore, type Store } from '../store/index.ts';
import { openPostgresStore, redactUrl } from '../store/postgres/openPostgresStore.ts';
import type { CollectorStore } from '../store/collectorStore.ts';
import { createCollectorMetrics } from '../outputs/metrics.ts';
import { numberOption, parseOptions, requireOption } from './args.ts';
import { announceNewTokens, logFatal } from './run.ts';
import { configSecrets, createServiceLog, LOG_OPTIONS, LOG_USAGE, logSettings } from './serviceLog.ts';

export { startCollector, type Collector, type CollectorOptions, type CollectorStats } from '../outputs/mqtt/mqttCollector.ts';
export { loadCollectorConfig, type CollectorConfig } from '../outputs/mqtt/collectorConfig.ts';
import type { CollectorConfig } from '../outputs/mqtt/collectorConfig.ts';
import type { Log } from '../domain/log.ts';

export const collectUsage = `residuum collect --config <file> [--data <folder>] [--port N] [--reset-token] [--log-level L] [--log-format F]

Collects the samples, states and events that counting services publish over MQTT, from every
site under the topic prefix, into one database (<data>/residuum.db, or PostgreSQL when the
configuration has storage.url), confirms to each site what it stored, and serves the read-only
dashboard, JSON API and /metrics over it. Camera door of site riverside is stored as riverside--door.
  --config  the collector configuration (YAML: site, storage, server, mqtt; no cameras)
  --data    folder of the SQLite database, and of new-keys.txt (default ./data)
  --port    HTTP port (default: server.port of the configuration, else 8080; 0 = any free port)
  --reset-token  make a new admin key (and view key) and print it once
${LOG_USAGE}`;

export interface CollectCommandOptions {
  /** Resolves when the collector should stop; default SIGINT or SIGTERM. */
  readonly until?: Promise<void>;
  /** The log; default the service log (serviceLog.ts) on `out`, as --log-level and --log-format say. */
  readonly log?: Log;
  /** Where RESIDUUM_ADMIN_KEY_FILE and RESIDUUM_LOG_LEVEL/FORMAT are read; default process.env. */
  readonly env?: Readonly<Record<string, string | undefined>>;
  /**
   * Where the log and the one-time key notice go; default standard output. New keys are printed
   * here only when it is a terminal, else written to <data>/new-keys.txt (see showNewTokens).
   */
  readonly out?: { write(text: string): unknown; isTTY?: boolean };
}

/** `residuum collect`: runs the collector until SIGINT or SIGTERM (or `options.until`). */
export async function collectCommand(argv: string[], options: CollectCommandOptions = {}): Promise<number> {
  const { out = process.stdout } = options;
  const v = parseOptions(argv, { config: { type: 'string' }, data: { type: 'string' }, port: { type: 'string' }, 'reset-token': { type: 'boolean' }, ...LOG_OPTIONS });
  const configFile = requireOption(v.config, 'config', 'the collector configuration file');
  const portOption = numberOption(v.port, 'port', { min: 0, max: 65535, integer: true });
  const serviceLog = createServiceLog({ ...logSettings(v, options.env, out), out });
  // A log handed in by the caller (tests) is used as it is.
  const log: Log = options.log ?? serviceLog.log;
  const { config, adminKey, store, where, collector } = await logFatal(log, async () => {
    // Validated before the database is opened: a bad file changes nothing.
    const config = loadCollectorConfig(configFile);
    for (const secret of configSecrets(config)) serviceLog.hide(secret);
    readMqttTls(config.mqtt); // unreadable TLS files fail here, before the database is touched
    const adminKey = adminKeyFromEnvironment(options.env); // RESIDUUM_ADMIN_KEY_FILE, likewise
    serviceLog.hide(adminKey);
    const { store, where } = openCollectorStore(config, v.data);
    try {
      return { config, adminKey, store, where, collector: startCollector(config.mqtt, { store, log }) };
    } catch (error) {
      store.close();
      throw error;
    }
  });
  const prune = () => {
    const { deleted } = store.applyRetention({
      sampleDays: config.storage.sampleRetentionDays,
      ...(config.storage.rollupRetentionDays !== undefined && { rollupDays: config.storage.rollupRetentionDays }),
    });
    if (deleted > 0) log(`retention: deleted ${deleted} samples older than ${config.storage.sampleRetentionDays} days`);
  };
  const metrics = createCollectorMetrics({ collector: () => collector.stats() });
  let server: Server | undefined;
  let retention: NodeJS.Timeout | undefined;
  try {
    prune();
    retention = setInterval(prune, 3_600_000);
    retention.unref();
    const app = createApp({
      // The dashboard reads cameras, zones, rollups and settings, which both stores have (CollectorStore).
      store: store as unknown as Store,
      metrics,
      live: () => collector.live(),
      siteName: config.site.name,
      timeZone: config.site.timeZone,
      startedAt: Date.now(),
      viewTokenRequired: config.server.viewToken,
      sampleRetentionDays: config.storage.sampleRetentionDays,
      host: config.server.host,
      log,
    });
    const port = portOption ?? config.server.port;
    server = await new Promise<Server>((done, fail) => {
      const s = app.listen(port, config.server.host, (error?: Error) => (error ? fail(new Error(`server: cannot listen on ${config.server.host}:${port} (${error.message})`)) : done(s)));
    });
    const address = server.address();
    const bound = typeof address === 'object' && address ? address.port : port;
    log(`collecting from ${new URL(config.mqtt.url).host} under ${config.mqtt.topicPrefix}/ into ${where}; dashboard at http://${config.server.host}:${bound}/`);
    const tokens = prepareTokens(store as unknown as Store, { viewToken: config.server.viewToken, reset: v['reset-token'] === true, ...(adminKey !== undefined && { adminKey }) });
    announceNewTokens(tokens, { dataDir: v.data ?? 'data', out, serviceLog: { hide: serviceLog.hide, log } });
    await (options.until ??
      new Promise<void>((done) => {
        process.once('SIGINT', () => done());
        process.once('SIGTERM', () => done());
      }));
    log('stopping');
  } catch (error) {
    log(`stopped by a failure: ${(error as Error)?.message ?? String(error)}`, 'fatal');
    throw error;
  } finally {
    if (retention) clearInterval(retention);
    await collector.stop();
    if (server) {
      server.closeAllConnections();
      await new Promise<void>((done) => server!.close(() => done()));
    }
    store.close();
  }
  log('stopped');
  return 0;
}

/**
 * The collector's store: PostgreSQL when the configuration has `storage.url`, else SQLite in
 * `<data>/residuum.db`. `where` names it for the log (never with a password).
 */
export function openCollectorStore(config: CollectorConfig, data: string | undefined): { store: CollectorStore; where: string } {
  if (config.storageUrl !== undefined) return { store: openPostgresStore(config.storageUrl, { timeZone: config.site.timeZone }), where: redactUrl(config.storageUrl) };
  const file = join(resolve(data ?? 'data'), 'residuum.db');
  return { store: sqliteCollectorStore(openStore(file, { timeZone: config.site.timeZone })), where: file };
}
