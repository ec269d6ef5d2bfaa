import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { loadConfig, type ResiduumConfig } from '../config/loadConfig.ts';
import { numberOption, parseOptions } from './args.ts';
import { announceNewTokens, logFatal, runUntilSignal, startService } from './run.ts';
import { adminKeyFromEnvironment } from '../server/tokens.ts';
import { configSecrets, createServiceLog, LOG_OPTIONS, LOG_USAGE, LogFormat, logSettings } from './serviceLog.ts';

/** The demo's configuration: two synthetic cameras (invented scenes; nobody real). */
export const demoConfigFile = fileURLToPath(new URL('../../config/demo.yaml', import.meta.url));

/** Where the demo keeps its database unless --data says otherwise. */
export const defaultDemoDataDir = join(tmpdir(), 'residuum-demo');

export const demoUsage = `residuum demo [--port N] [--data <folder>] [--speed S] [--reset-token] [--log-level L] [--log-format F]

Runs the counting service on config/demo.yaml: a synthetic reading room and a synthetic stock
room (invented scenes, nobody real), counted live, with the dashboard in your browser.
  --port         HTTP port (default 8080; 0 = any free port)
  --data         folder of the demo database (default ${defaultDemoDataDir}; delete it to start afresh)
  --speed        scene seconds per real second for both cameras (default 1, as in the file)
  --reset-token  make a new admin key and print it; the old one stops working
${LOG_USAGE}
The admin key (needed to draw zones and learn the empty scene) is printed at the first start only.`;

/** `residuum demo`: the service on the demo configuration, until SIGINT or SIGTERM. */
export async function demoCommand(
  argv: string[],
  io: { out: { write(text: string): unknown; isTTY?: boolean }; env?: Readonly<Record<string, string | undefined>> } = { out: process.stdout },
): Promise<number> {
  const v = parseOptions(argv, {
    port: { type: 'string' },
    data: { type: 'string' },
    speed: { type: 'string' },
    'reset-token': { type: 'boolean' },
    ...LOG_OPTIONS,
  });
  const port = numberOption(v.port, 'port', { min: 0, max: 65535, integer: true });
  const speed = numberOption(v.speed, 'speed', { min: 0.01, max: 1000 });
  const dataDir = resolve(v.data ?? defaultDemoDataDir);
  const settings = logSettings(v, io.env, io.out);
  const serviceLog = createServiceLog({ ...settings, out: io.out });
  const { log } = serviceLog;
  // The greeting is for a person at a terminal; in a JSON log it is a line like the others.
  const say = (text: string) => (settings.format === LogFormat.text ? io.out.write(`${text}\n`) : log(text));
  const { config, service } = await logFatal(log, async () => {
    const config = withSpeed(loadConfig(demoConfigFile), speed);
    for (const secret of configSecrets(config)) serviceLog.hide(secret);
    serviceLog.hide(adminKeyFromEnvironment(io.env));
    say(`Residuum demo: ${config.cameras.map((c) => c.name).join(' and ')} (synthetic scenes; nobody real is shown)`);
    say(`data folder: ${dataDir}`);
    return { config, service: await startService(config, { dataDir, port, log, resetToken: v['reset-token'] === true, ...(io.env && { env: io.env }) }) };
  });
  // Once, to the terminal or a file only this user can read; never through the log.
  announceNewTokens(service.newTokens, { dataDir, out: io.out, serviceLog });
  const dashboard = `http://${config.server.host}:${service.port}/`;
  if (settings.format === LogFormat.text) io.out.write(`\nDashboard: ${dashboard}\nStop with Ctrl+C.\n\n`);
  else log(`dashboard at ${dashboard}`);
  await runUntilSignal(service, log);
  return 0;
}

/** The configuration with every synthetic camera played at `speed` (unchanged when undefined). */
function withSpeed(config: ResiduumConfig, speed: number | undefined): ResiduumConfig {
  if (speed === undefined) return config;
  return {
    ...config,
    cameras: config.cameras.map((c) => (c.source.kind === 'synthetic' ? { ...c, source: { ...c.source, speed } } : c)),
  };
}
