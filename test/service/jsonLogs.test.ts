import { once } from 'node:events';
import { chmodSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer, type AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parse, stringify } from 'yaml';
import { afterEach, describe, expect, it } from 'vitest';
import { logRecords, type LogRecord } from './logRecords.ts';
import { spawnResiduum, type RunningChild } from './spawnResiduum.ts';
import { testConfig } from './testConfig.ts';
import { waitUntil } from './waitUntil.ts';

// The service's log as IT runs it: one JSON object per line on standard output (pino's format,
// see logRecords.ts for the check), levels that can be chosen, and never a key or password.
const dirs: string[] = [];
const kills: (() => void)[] = [];
afterEach(() => {
  for (const k of kills.splice(0)) k();
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

/** Invented secrets for the test; long and random-looking like real ones. */
const ADMIN_KEY = 'a1B2c3D4e5F6g7H8i9J0k1L2m3N4o5P6q7R8s9T0uvwx';
const MQTT_PASSWORD = 'mqtt-Pa55word-that-must-never-be-logged';

/** A service configuration (testConfig) with MQTT to a port nobody listens on, with a password; and an admin key file. */
function setUp(): { dir: string; configFile: string; env: NodeJS.ProcessEnv } {
  const dir = mkdtempSync(join(tmpdir(), 'residuum-json-logs-'));
  dirs.push(dir);
  const configFile = testConfig(dir);
  const doc = parse(readFileSync(configFile, 'utf8')) as Record<string, unknown>;
  // Port 1 on the loopback: the connection is refused at once, so the log has MQTT warnings.
  doc.mqtt = { url: 'mqtt://127.0.0.1:1', username: 'counter', password: MQTT_PASSWORD };
  writeFileSync(configFile, stringify(doc));
  const keyFile = join(dir, 'admin-key');
  writeFileSync(keyFile, `${ADMIN_KEY}\n`);
  chmodSync(keyFile, 0o600); // readable by this user only, or the service refuses it
  return { dir, configFile, env: { ...process.env, RESIDUUM_ADMIN_KEY_FILE: keyFile } };
}

function start(args: string[], env: NodeJS.ProcessEnv): RunningChild {
  const run = spawnResiduum(['run', ...args, '--port', '0'], { env });
  kills.push(() => {
    if (run.child.exitCode === null && run.child.signalCode === null) run.child.kill('SIGKILL');
  });
  return run;
}

/** Sends wrong keys (the right one with its last character changed) and one request with the right key. */
async function useKeys(port: number): Promise<void> {
  const zonesUrl = `http://127.0.0.1:${port}/api/cameras/reading-room/zones`;
  const zones = ((await (await fetch(zonesUrl)).json()) as { zones: unknown[] }).zones;
  for (let i = 0; i < 3; i++) {
    await fetch(zonesUrl, { method: 'PUT', headers: { Authorization: `Bearer ${ADMIN_KEY.slice(0, -1)}${i}`, 'Content-Type': 'application/json' }, body: JSON.stringify({ zones }) });
  }
  const good = await fetch(zonesUrl, { method: 'PUT', headers: { Authorization: `Bearer ${ADMIN_KEY}`, 'Content-Type': 'application/json' }, body: JSON.stringify({ zones }) });
  expect(good.status).toBe(200);
}

function expectNoSecrets(run: RunningChild): void {
  const all = Buffer.concat([run.stdout(), run.stderr()]).toString('utf8');
  for (const secret of [ADMIN_KEY, MQTT_PASSWORD]) {
    expect(all).not.toContain(secret);
    expect(all).not.toContain(secret.slice(0, 16));
  }
}

const records = (run: RunningChild): LogRecord[] => logRecords(run.stdout());

describe('the service log', () => {
  it('is one JSON object per line with level, time and msg; camera lines from the worker threads carry the camera; no key or password in it', async () => {
    const { dir, configFile, env } = setUp();
    const run = start(['--config', configFile, '--data', join(dir, 'data')], env);
    const port = Number((await run.waitForOutput(/serving the API at http:\/\/127\.0\.0\.1:(\d+)\//, 240_000))[1]);
    await useKeys(port);
    // Learning runs in the camera's worker thread (cameraPipeline.ts): its line crosses to the main thread's log.
    const learn = await fetch(`http://127.0.0.1:${port}/api/cameras/reading-room/learn`, { method: 'POST', headers: { Authorization: `Bearer ${ADMIN_KEY}`, 'Content-Type': 'application/json' }, body: '{"seconds": 1}' });
    expect(learn.status).toBe(202);
    await waitUntil(() => records(run).some((r) => /learned (the empty scene|a poor model) from \d+ frames/.test(r.msg)), { what: 'the learned line from the worker', timeoutMs: 120_000 });
    run.child.kill('SIGTERM');
    expect(await run.exit(120_000)).toEqual({ code: 0, signal: null });

    const log = records(run); // throws naming any line that is not a log record
    expect(run.stderr().toString('utf8')).toBe('');
    const learned = log.find((r) => /learned (the empty scene|a poor model) from/.test(r.msg))!;
    expect(learned.camera).toBe('reading-room');
    expect(['info', 'warn']).toContain(learned.level);
    expect(log.find((r) => r.msg.startsWith('camera reading-room: started'))).toMatchObject({ level: 'info', camera: 'reading-room' });
    expect(log.find((r) => r.msg.includes('zones changed from the dashboard'))).toMatchObject({ level: 'info', camera: 'reading-room' });
    const wrong = log.filter((r) => r.msg.startsWith('auth: a wrong key from'));
    expect(wrong).toHaveLength(3);
    for (const r of wrong) expect(r).toMatchObject({ level: 'warn', component: 'auth' });
    expect(log.some((r) => r.level === 'warn' && r.component === 'mqtt')).toBe(true);
    expect(log.map((r) => r.msg).slice(-2)).toEqual(['stopping', 'stopped']);
    // An operator's key from RESIDUUM_ADMIN_KEY_FILE is not new: no key notice at all.
    expect(log.some((r) => r.component === 'keys')).toBe(false);
    expectNoSecrets(run);
  }, 400_000);

  it('--log-level warn drops the info lines and keeps the warnings', async () => {
    const { dir, configFile, env } = setUp();
    // The "serving" line is info, so it is not there to read the port from: the test picks a free one.
    const port = await freePort();
    const run = spawnResiduum(['run', '--config', configFile, '--data', join(dir, 'data'), '--port', String(port), '--log-level', 'warn'], { env });
    kills.push(() => {
      if (run.child.exitCode === null && run.child.signalCode === null) run.child.kill('SIGKILL');
    });
    await waitUntil(async () => (await fetch(`http://127.0.0.1:${port}/api/health`).catch(() => undefined))?.ok === true, { what: 'the service to answer', timeoutMs: 240_000, intervalMs: 200 });
    await useKeys(port);
    await waitUntil(() => records(run).filter((r) => r.component === 'auth').length >= 3, { what: 'the wrong-key warnings', timeoutMs: 30_000 });
    run.child.kill('SIGTERM');
    expect(await run.exit(120_000)).toEqual({ code: 0, signal: null });

    const log = records(run);
    expect(log.filter((r) => r.level === 'info' || r.level === 'debug')).toEqual([]);
    expect(log.filter((r) => r.msg.startsWith('auth: a wrong key from'))).toHaveLength(3);
    expect(log.some((r) => r.level === 'warn' && r.component === 'mqtt')).toBe(true);
    expectNoSecrets(run);
  }, 400_000);

  it('refuses an unknown level, naming the option', async () => {
    const { dir, configFile, env } = setUp();
    const run = spawnResiduum(['run', '--config', configFile, '--data', join(dir, 'data'), '--log-level', 'loud'], { env });
    expect((await run.exit(60_000)).code).toBe(2);
    expect(run.stderr().toString('utf8')).toContain('--log-level must be one of fatal, error, warn, info, debug, trace, silent, got "loud"');
  }, 90_000);
});

/** A TCP port free on 127.0.0.1 a moment ago (the OS picks it). */
async function freePort(): Promise<number> {
  const server = createServer();
  server.listen(0, '127.0.0.1');
  await once(server, 'listening');
  const { port } = server.address() as AddressInfo;
  await new Promise<void>((done) => server.close(() => done()));
  return port;
}
