import { chmodSync, existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { startService } from '../../src/commands/run.ts';
import { validateConfig } from '../../src/config/loadConfig.ts';
import { adminKeyFromEnvironment, hashToken, prepareTokens, TOKEN_SETTING, tokenMatches } from '../../src/server/tokens.ts';
import { tempStore } from '../store/tempStore.ts';
import { jsonOf } from './testService.ts';

const dir = mkdtempSync(join(tmpdir(), 'residuum-keyfile-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** A key as `openssl rand -hex 32` would make one (64 characters), here from our own bytes. */
const KEY = Buffer.alloc(32, 0xa7).toString('hex');
const keyFile = (name: string, content: string, mode = 0o600) => {
  const path = join(dir, name);
  writeFileSync(path, content);
  chmodSync(path, mode);
  return path;
};
const env = (path: string) => ({ RESIDUUM_ADMIN_KEY_FILE: path });

describe('RESIDUUM_ADMIN_KEY_FILE', () => {
  it('is optional, and gives the key of a private file (final line break dropped)', () => {
    expect(adminKeyFromEnvironment({})).toBeUndefined();
    expect(adminKeyFromEnvironment(env(keyFile('key', `${KEY}\n`)))).toBe(KEY);
    expect(adminKeyFromEnvironment(env(keyFile('key-400', KEY, 0o400)))).toBe(KEY);
  });

  it('names the variable when the file is missing, empty, short, world-readable, or the variable is empty', () => {
    expect(() => adminKeyFromEnvironment(env(join(dir, 'none')))).toThrow(/^RESIDUUM_ADMIN_KEY_FILE cannot be read: .*none \(ENOENT, no such file\)/);
    expect(() => adminKeyFromEnvironment(env(keyFile('empty', '\n')))).toThrow(/^RESIDUUM_ADMIN_KEY_FILE .*empty is empty/);
    expect(() => adminKeyFromEnvironment(env(keyFile('short', 'letmein')))).toThrow(/^RESIDUUM_ADMIN_KEY_FILE names .*short, whose key must be 32 to 200 letters, digits, "-" or "_" on one line/);
    expect(() => adminKeyFromEnvironment(env(keyFile('spaced', `${KEY} ${KEY}`)))).toThrow(/on one line/);
    // A key auth.ts could never accept as a Bearer token (RFC 6750 b64token, narrowed to base64url here) is refused at the start.
    expect(() => adminKeyFromEnvironment(env(keyFile('padded', Buffer.alloc(32, 7).toString('base64'))))).toThrow(/letters, digits, "-" or "_"/);
    // check: POSIX mode bits, 0o004 = readable by others (common practice: ssh refuses such a private key)
    const open = keyFile('open', KEY, 0o644);
    expect(() => adminKeyFromEnvironment(env(open))).toThrow(/^RESIDUUM_ADMIN_KEY_FILE .*open may be read by every user of this machine; make it readable by this user only/);
    expect(() => adminKeyFromEnvironment({ RESIDUUM_ADMIN_KEY_FILE: '' })).toThrow(/^RESIDUUM_ADMIN_KEY_FILE is set but empty/);
  });

  it('replaces the stored digest and is never returned as a new key', () => {
    const t = tempStore();
    try {
      const made = prepareTokens(t.store, {});
      expect(made.admin).toBeDefined();
      const given = prepareTokens(t.store, { adminKey: KEY, viewToken: true });
      expect(given.admin).toBeUndefined();
      expect(given.view).toBeDefined();
      expect(t.store.getSetting(TOKEN_SETTING.admin)).toBe(hashToken(KEY));
      expect(tokenMatches(t.store, 'admin', KEY)).toBe(true);
      expect(tokenMatches(t.store, 'admin', made.admin!)).toBe(false);
      // --reset-token with a key file: the file's key stays the admin key.
      expect(prepareTokens(t.store, { adminKey: KEY, reset: true }).admin).toBeUndefined();
      expect(tokenMatches(t.store, 'admin', KEY)).toBe(true);
    } finally {
      t.cleanup();
    }
  });

  const config = () =>
    validateConfig({
      site: { name: 'Key file site', timeZone: 'Europe/Berlin' },
      server: { host: '127.0.0.1', port: 0 },
      cameras: [{ id: 'reading-room', source: { kind: 'synthetic', scene: 'reading-room', speed: 10 }, size: [160, 120], zones: [{ id: 'all', name: 'All', kind: 'room', capacity: 9, polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] }] }],
    });

  it('is the admin key of the running service, which shows none of its own', async () => {
    const dataDir = mkdtempSync(join(dir, 'data-'));
    const service = await startService(config(), { dataDir, port: 0, env: env(keyFile('service', KEY)) });
    try {
      expect(service.newTokens.admin).toBeUndefined();
      const auth = (key: string) => fetch(`http://127.0.0.1:${service.port}/api/auth`, { headers: { Authorization: `Bearer ${key}` } });
      expect(await jsonOf(await auth(KEY))).toMatchObject({ role: 'admin' });
      expect((await auth('x'.repeat(43))).status).toBe(401);
    } finally {
      await service.stop();
    }
  });

  it('stops the start before the database is opened when the file is bad', async () => {
    const dataDir = mkdtempSync(join(dir, 'data-'));
    await expect(startService(config(), { dataDir, port: 0, env: env(keyFile('bad', KEY, 0o604)) })).rejects.toThrow(/RESIDUUM_ADMIN_KEY_FILE .*may be read by every user/);
    expect(existsSync(join(dataDir, 'residuum.db'))).toBe(false);
  });
});
