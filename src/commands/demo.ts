import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { loadConfig, type ResiduumConfig } from '../config/loadConfig.ts';
import { numberOption, parseOptions } from './args.ts';
import { logLine, runUntilSignal, showNewTokens, startService } from './run.ts';

/** The demo's configuration: two synthetic cameras (invented scenes; nobody real). */
export const demoConfigFile = fileURLToPath(new URL('../../config/demo.yaml', import.meta.url));

/** Where the demo keeps its database unless --data says otherwise. */
export const defaultDemoDataDir = join(tmpdir(), 'residuum-demo');

export const demoUsage = `residuum demo [--port N] [--data <folder>] [--speed S] [--reset-token]

Runs the counting service on config/demo.yaml: a synthetic reading room and a synthetic stock
room (invented scenes, nobody real), counted live, with the dashboard in your browser.
  --port         HTTP port (default 8080; 0 = any free port)
  --data         folder of the demo database (default ${defaultDemoDataDir}; delete it to start afresh)
  --speed        scene seconds per real second for both cameras (default 1, as in the file)
  --reset-token  make a new admin key and print it; the old one stops working
The admin key (needed to draw zones and learn the empty scene) is printed at the first start only.`;

/** `residuum demo`: the service on the demo configuration, until SIGINT or SIGTERM. */
export async function demoCommand(argv: string[], io: { out: { write(text: string): unknown; isTTY?: boolean } } = { out: process.stdout }): Promise<number> {
  const v = parseOptions(argv, {
    port: { type: 'string' },
    data: { type: 'string' },
    speed: { type: 'string' },
    'reset-token': { type: 'boolean' },
  });
  const port = numberOption(v.port, 'port', { min: 0, max: 65535, integer: true });
  const speed = numberOption(v.speed, 'speed', { min: 0.01, max: 1000 });
  const dataDir = resolve(v.data ?? defaultDemoDataDir);
  const config = withSpeed(loadConfig(demoConfigFile), speed);

  io.out.write(`Residuum demo: ${config.cameras.map((c) => c.name).join(' and ')} (synthetic scenes; nobody real is shown)\n`);
  io.out.write(`data folder: ${dataDir}\n`);
  const service = await startService(config, { dataDir, port, log: logLine, resetToken: v['reset-token'] === true });
  // Once, to the terminal or a file only this user can read; never through the log.
  io.out.write(showNewTokens(service.newTokens, { dataDir, out: io.out }));
  io.out.write(`\nDashboard: http://${config.server.host}:${service.port}/\nStop with Ctrl+C.\n\n`);
  await runUntilSignal(service);
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
