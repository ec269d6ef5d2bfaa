import { chmodSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { readSecret } from '../../src/config/readSecret.ts';

const dir = mkdtempSync(join(tmpdir(), 'residuum-secret-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const fail = (at: string, message: string): never => {
  throw new Error(`site.yaml: ${at} ${message}`);
};
const file = (name: string, content: string, mode: number) => {
  const path = join(dir, name);
  writeFileSync(path, content);
  chmodSync(path, mode);
  return path;
};
const read = (v: unknown, privateFile = false) => readSecret(v, 'mqtt.password', fail, { base: dir, env: { MQTT_PASSWORD: 'from-env', EMPTY: '' }, privateFile });

describe('readSecret', () => {
  it('takes text, an environment variable or a file (without its final line break)', () => {
    expect(read('plain')).toBe('plain');
    expect(read({ env: 'MQTT_PASSWORD' })).toBe('from-env');
    file('pw', 'from-file\n', 0o600);
    expect(read({ file: 'pw' })).toBe('from-file');
    expect(read({ file: join(dir, 'pw') }, true)).toBe('from-file');
  });

  it('names the field when the variable or file is missing, unreadable or empty', () => {
    expect(() => read({ env: 'NOT_SET_HERE' })).toThrow(/site\.yaml: mqtt\.password\.env names the environment variable NOT_SET_HERE, which is not set or empty/);
    expect(() => read({ env: 'EMPTY' })).toThrow(/mqtt\.password\.env .*not set or empty/);
    expect(() => read({ file: 'missing' })).toThrow(/mqtt\.password\.file cannot be read: .*missing \(ENOENT, no such file\)/);
    mkdirSync(join(dir, 'folder'));
    expect(() => read({ file: 'folder' })).toThrow(/mqtt\.password\.file cannot be read: .*folder \(EISDIR, a folder\)/);
    file('empty', '\n', 0o600);
    expect(() => read({ file: 'empty' })).toThrow(/mqtt\.password\.file .*empty is empty; it must hold the secret/);
    expect(() => read({ env: 'A', file: 'pw' })).toThrow(/mqtt\.password must have exactly one of env/);
    expect(() => read({ path: 'pw' })).toThrow(/mqtt\.password\.path is not a known setting here/);
  });

  // Root reads any file whatever its mode, so the refusal can only be seen as another user.
  it.skipIf(process.getuid?.() === 0)('names the field when the file may not be read', () => {
    file('locked', 'x', 0o000);
    expect(() => read({ file: 'locked' })).toThrow(/mqtt\.password\.file cannot be read: .*locked \(EACCES, permission denied\)/);
  });

  it('refuses a file every user may read when the secret must be private', () => {
    const open = file('open', 'secret\n', 0o644);
    // check: chmod(1) / POSIX mode bits: 0o004 is "readable by others" (common practice, as ssh refuses such a private key)
    expect(() => read({ file: 'open' }, true)).toThrow(new RegExp(`mqtt\\.password\\.file ${open} may be read by every user of this machine; make it readable by this user only`));
    expect(read({ file: 'open' })).toBe('secret');
    chmodSync(open, 0o640);
    expect(read({ file: 'open' }, true)).toBe('secret');
  });

  it('never echoes a value that may be the secret', () => {
    const message = (() => {
      try {
        read(123456789);
      } catch (e) {
        return (e as Error).message;
      }
      return '';
    })();
    expect(message).toMatch(/mqtt\.password must be text, \{ env: NAME \} or \{ file: path \}/);
    expect(message).not.toContain('123456789');
  });
});
