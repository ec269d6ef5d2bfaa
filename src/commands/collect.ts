import type { Server } from 'node:http';
import { join, resolve } from 'node:path';
import { loadCollectorConfig } from '../outputs/mqtt/collectorConfig.ts';
import { sqliteCollectorStore } from '../store/collectorStore.ts';
import { startCollector, type Collector } from '../outputs/mqtt/mqttCollector.ts';
import { readMqttTls } from '../outputs/mqtt/mqttSettings.ts';
import { createApp } from '../server/createApp.ts';
import { adminKeyFromEnvironment, prepareTokens, tokenNotice } from '../server/tokens.ts';
import { openStore, type Store } from '../store/index.ts';
import { openPostgresStore, redactUrl } from '../store/postgres/openPostgresStore.ts';
import type { CollectorStore } from '../store/collectorStore.ts';
import { createCollectorMetrics } from '../outputs/metrics.ts';
import { numberOption, parseOptions, requireOption } from './args.ts';

export { startCollector, type Collector, type CollectorOptions, type CollectorStats } from '../outputs/mqtt/mqttCollector.ts';
export { loadCollectorConfig, type CollectorConfig } from '../outputs/mqtt/collectorConfig.ts';
import type { CollectorConfig } from '../outputs/mqtt/collectorConfig.ts';

export const collectUsage = `residuum collect --config <file> [--data <folder>] [--port N] [--reset-token]

Collects the samples, states and events that counting services publish over MQTT, from every
site under the topic prefix, into one database (<data>/residuum.db, or PostgreSQL when the
configuration has storage.url), confirms to each site what it stored, and serves the read-only
dashboard, JSON API and /metrics over it. Camera door of site riverside is stored as riverside--door.
  --config  the collector configuration (YAML: site, storage, server, mqtt; no cameras)
  --data    folder of the SQLite database (default ./data; not used with storage.url)
  --port    HTTP port (default: server.port of the configuration, else 8080; 0 = any free port)
  --reset-token  make a new admin key (and view key) and print it once`;

export interface CollectCommandOptions {
  /** Resolves when the collector should stop; default SIGINT or SIGTERM. */
  readonly until?: Promise<void>;
  readonly log?: (line: string) => void;
  /** Where RESIDUUM_ADMIN_KEY_FILE is read; default process.env. */
  readonly env?: Readonly<Record<string, string | undefined>>;
  /** Where the one-time key notice goes; default standard output. */
  readonly out?: { write(text: string): unknown };
}

function logLine(line: string): void {
  process.stdout.write(`${new Date().toISOString()} ${line}\n`);
}

/** `residuum collect`: runs the collector until SIGINT or SIGTERM (or `options.until`). */
export async function collectCommand(argv: string[], options: CollectCommandOptions = {}): Promise<number> {
  const { log = logLine, out = process.stdout } = options;
  const v = parseOptions(argv, { config: { type: 'string' }, data: { type: 'string' }, port: { type: 'string' }, 'reset-token': { type: 'boolean' } });
  const configFile = requireOption(v.config, 'config', 'the collector configuration file');
  const portOption = numberOption(v.port, 'port', { min: 0, max: 65535, integer: true });
  // Validated before the database is opened: a bad file changes nothing.
  const config = loadCollectorConfig(configFile);
  readMqttTls(config.mqtt); // unreadable TLS files fail here, before the database is touched
  const adminKey = adminKeyFromEnvironment(options.env); // RESIDUUM_ADMIN_KEY_FILE, likewise
  const { store, where } = openCollectorStore(config, v.data);
  let collector: Collector;
  try {
    collector = startCollector(config.mqtt, { store, log });
  } catch (error) {
    store.close();
    throw error;
  }
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
    out.write(tokenNotice(prepareTokens(store as unknown as Store, { viewToken: config.server.viewToken, reset: v['reset-token'] === true, ...(adminKey !== undefined && { adminKey }) })));
    await (options.until ??
      new Promise<void>((done) => {
        process.once('SIGINT', () => done());
        process.once('SIGTERM', () => done());
      }));
    log('stopping');
  } finally {
    if (retention) clearInterval(retention);
    await collector.stop();
    if (server) {
      server.closeAllConnections();
      await new Promise<void>((done) => server!.close(() => done()));
    }
    store.close();
  }
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
