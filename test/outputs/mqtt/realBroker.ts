import { spawn, type ChildProcess } from 'node:child_process';
import { once } from 'node:events';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { createConnection, createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { connect } from 'mqtt';

/**
 * The real Mosquitto of the development and CI machines (127.0.0.1:1883), and Mosquitto instances
 * of our own (own port, configuration and persistence file) for tests that restart the broker.
 */

export const SHARED_BROKER = { host: '127.0.0.1', port: 1883, url: 'mqtt://127.0.0.1:1883' } as const;

/** Whether something accepts TCP connections at host:port (within 1 s). */
export async function listening(host: string, port: number): Promise<boolean> {
  return new Promise((done) => {
    const socket = createConnection({ host, port });
    const timer = setTimeout(() => finish(false), 1000);
    const finish = (ok: boolean) => {
      clearTimeout(timer);
      socket.destroy();
      done(ok);
    };
    socket.once('connect', () => finish(true));
    socket.once('error', () => finish(false));
  });
}

/** A TCP port free at the moment. */
export async function freePort(): Promise<number> {
  const server = createServer();
  server.listen(0, '127.0.0.1');
  await once(server, 'listening');
  const address = server.address();
  const port = typeof address === 'object' && address ? address.port : 0;
  await new Promise<void>((done) => server.close(() => done()));
  return port;
}

/** A topic prefix no other test run uses. */
export function testPrefix(name: string): string {
  return `residuum-test/${name}-${process.pid}-${Math.random().toString(16).slice(2, 8)}`;
}

/**
 * Deletes every retained message under `prefix` (an empty retained message deletes one; MQTT
 * 3.1.1 §3.3.1.3) and the persistent sessions of `clientIds` (a clean connection ends a session).
 */
export async function cleanUpBroker(url: string, prefix: string, clientIds: readonly string[] = []): Promise<void> {
  const client = connect(url, { reconnectPeriod: 0, clientId: `cleanup-${Math.random().toString(16).slice(2, 10)}` });
  await new Promise<void>((done, fail) => client.once('connect', () => done()).once('error', fail));
  const retained = new Set<string>();
  client.on('message', (topic, payload, packet) => {
    if (packet.retain && payload.length > 0) retained.add(topic);
  });
  await client.subscribeAsync(`${prefix}/#`, { qos: 1 });
  await new Promise((done) => setTimeout(done, 500));
  for (const topic of retained) await client.publishAsync(topic, '', { qos: 1, retain: true });
  await client.endAsync();
  for (const clientId of clientIds) {
    const c = connect(url, { reconnectPeriod: 0, clientId, clean: true });
    await new Promise<void>((done, fail) => c.once('connect', () => done()).once('error', fail));
    await c.endAsync();
  }
}

/** A Mosquitto of our own: persistence on, in its own folder; `stop()` is a clean shutdown (it saves), `kill()` is not. */
export interface OwnBroker {
  readonly url: string;
  readonly port: number;
  readonly dir: string;
  start(): Promise<void>;
  stop(): Promise<void>;
  /** SIGKILL: nothing is saved. */
  kill(): Promise<void>;
  remove(): void;
}

/**
 * Writes a configuration (listener on 127.0.0.1:port, persistence in a temporary folder, the
 * given extra lines) and runs `mosquitto -c` on it. Throws when mosquitto is not installed.
 */
export async function ownMosquitto(extra: readonly string[] = []): Promise<OwnBroker> {
  const port = await freePort();
  const dir = mkdtempSync(join(tmpdir(), 'residuum-mosquitto-'));
  const conf = join(dir, 'mosquitto.conf');
  const lines = [`listener ${port} 127.0.0.1`, 'allow_anonymous true', 'persistence true', `persistence_location ${dir}/`];
  // Run as root (CI containers), Mosquitto would switch to its own user, which cannot write here.
  if (process.getuid?.() === 0) lines.push('user root');
  writeFileSync(conf, [...lines, ...extra, ''].join('\n'));
  let child: ChildProcess | undefined;
  const end = async (signal: NodeJS.Signals) => {
    if (!child || child.exitCode !== null) return;
    const exited = once(child, 'exit');
    child.kill(signal);
    await exited;
    child = undefined;
  };
  const broker: OwnBroker = {
    url: `mqtt://127.0.0.1:${port}`,
    port,
    dir,
    async start() {
      child = spawn('mosquitto', ['-c', conf], { stdio: 'ignore' });
      const failed = once(child, 'error');
      for (let i = 0; i < 100; i++) {
        if (await listening('127.0.0.1', port)) return;
        const error = await Promise.race([failed, new Promise((done) => setTimeout(() => done(undefined), 50))]);
        if (error) throw new Error(`mosquitto: cannot start (${String((error as Error[])[0]?.message ?? error)})`);
      }
      throw new Error(`mosquitto: not listening on ${port} after 5 s`);
    },
    stop: () => end('SIGTERM'),
    kill: () => end('SIGKILL'),
    remove() {
      child?.kill('SIGKILL');
      rmSync(dir, { recursive: true, force: true });
    },
  };
  return broker;
}
