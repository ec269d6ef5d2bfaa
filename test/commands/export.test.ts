import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, describe, expect, it } from 'vitest';

const root = new URL('../../', import.meta.url).pathname;
const dir = mkdtempSync(join(tmpdir(), 'residuum-export-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function residuum(...args: string[]) {
  const run = spawnSync(process.execPath, [join(root, 'bin/residuum.js'), ...args], { cwd: dir, encoding: 'utf8', timeout: 60_000 });
  return { code: run.status, out: run.stdout, err: run.stderr };
}

describe('residuum export --db', () => {
  it('refuses a file that is not a Residuum database and leaves it as it was', () => {
    const other = join(dir, 'other.db');
    const db = new Database(other);
    db.exec('CREATE TABLE t (x)');
    db.close();
    const before = readFileSync(other);
    const run = residuum('export', '--db', other, '--from', '2026-12-01', '--to', '2026-12-01');
    expect(run.code).toBe(1);
    expect(run.err).toMatch(/other\.db: not a Residuum database .*nothing was changed/);
    expect(readFileSync(other).equals(before)).toBe(true);

    const text = join(dir, 'notes.txt');
    writeFileSync(text, 'hello');
    const notDb = residuum('export', '--db', text, '--from', '2026-12-01', '--to', '2026-12-01');
    expect(notDb.code).toBe(1);
    expect(notDb.err).toMatch(/notes\.txt: not a readable SQLite database/);
    expect(readFileSync(text, 'utf8')).toBe('hello');
  });
});
