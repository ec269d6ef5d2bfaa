import { mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { NEW_KEYS_FILE } from '../../src/commands/run.ts';
import { TOKEN_SETTING, tokenMatches } from '../../src/server/tokens.ts';
import { openStore } from '../../src/store/index.ts';
import { spawnResiduum } from './spawnResiduum.ts';
import { testConfig } from './testConfig.ts';

// Issue: the admin key went to the same stream as the log lines, and the database was created
// readable by everyone. Modes as POSIX permission bits (check: POSIX chmod, 0600 = owner read and
// write, 0700 = owner only; common practice for secrets).
const dirs: string[] = [];
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

describe('the admin key and the data folder', () => {
  it('writes the key to a 0600 file, not to a standard output that is not a terminal; database 0600, folder 0700', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'residuum-keys-'));
    dirs.push(dir);
    const data = join(dir, 'data');
    const run = spawnResiduum(['run', '--config', testConfig(dir), '--data', data]);
    try {
      await run.waitForOutput(/written to .*new-keys\.txt/, 60_000);
    } finally {
      run.child.kill('SIGTERM');
      await run.exit(30_000);
    }
    const keysFile = join(data, NEW_KEYS_FILE);
    expect(statSync(keysFile).mode & 0o777).toBe(0o600);
    const key = /^ {2}([A-Za-z0-9_-]{43})$/m.exec(readFileSync(keysFile, 'utf8'))?.[1];
    expect(key).toBeDefined();
    const out = run.stdout().toString('utf8') + run.stderr().toString('utf8');
    expect(out).not.toContain(key!);
    expect(out).toContain(`New admin key was written to ${keysFile}`);
    expect(statSync(data).mode & 0o777).toBe(0o700);
    expect(statSync(join(data, 'residuum.db')).mode & 0o777).toBe(0o600);
    const store = openStore(join(data, 'residuum.db'));
    try {
      expect(typeof store.getSetting(TOKEN_SETTING.admin)).toBe('string');
      expect(tokenMatches(store, 'admin', key!)).toBe(true);
    } finally {
      store.close();
    }
  }, 90_000);
});
