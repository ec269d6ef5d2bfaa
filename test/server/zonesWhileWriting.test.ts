import { spawn } from 'node:child_process';
import { once } from 'node:events';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { READING_ROOM_ZONES, startTestService, type TestService } from './testService.ts';

// Zone changes from the dashboard while another connection writes the database, as the camera
// threads do all the time: the change must wait for the lock, not fail. A child process holds
// SQLite's write lock (BEGIN IMMEDIATE) and commits while the request waits for it. (A deferred
// transaction that reads before it writes gets SQLITE_BUSY at once in this case, without waiting
// for busy_timeout: check: SQLite, "Isolation In SQLite" and the busy handler's documentation,
// recalled from memory; this test failed with a 500 before the service took the lock first.)
let t: TestService;
beforeAll(async () => {
  t = await startTestService();
});
afterAll(async () => {
  await t?.stop();
});

/** Starts a process that takes the write lock, says `locked`, and commits a harmless row after `holdMs`. */
async function holdWriteLock(file: string, holdMs: number): Promise<{ exited: Promise<void> }> {
  const script = `
    const Database = require('better-sqlite3');
    const db = new Database(process.argv[1]);
    db.pragma('busy_timeout = 5000');
    db.exec('BEGIN IMMEDIATE');
    db.prepare("INSERT OR REPLACE INTO settings (key, value, updated) VALUES ('test-lock-holder', '1', 0)").run();
    require('node:fs').writeSync(1, 'locked\\n');
    Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, Number(process.argv[2]));
    db.exec('COMMIT');
    db.close();
  `;
  const child = spawn(process.execPath, ['-e', script, file, String(holdMs)], { cwd: process.cwd(), stdio: ['ignore', 'pipe', 'inherit'] });
  let out = '';
  child.stdout.setEncoding('utf8');
  while (!out.includes('locked')) {
    const [chunk] = (await once(child.stdout, 'data')) as [string];
    out += chunk;
  }
  // Wrapped in an object: an async function returning the promise itself would wait for it.
  const exited = once(child, 'exit').then(([code]) => {
    if (code !== 0) throw new Error(`lock holder exited with ${String(code)}`);
  });
  return { exited };
}

describe('PUT /api/cameras/:id/zones while another connection writes', () => {
  it('waits for the write lock and stores the zones', async () => {
    const file = t.service.store.db.name;
    const { exited } = await holdWriteLock(file, 600);
    const zones = READING_ROOM_ZONES.map((z, i) => (i === 0 ? { ...z, name: 'Entrance (renamed)' } : z));
    const res = await fetch(`${t.base}/api/cameras/reading-room/zones`, {
      method: 'PUT',
      headers: { 'Content-Type': 'application/json', Authorization: `Bearer ${t.adminKey}` },
      body: JSON.stringify({ zones }),
    });
    await exited;
    expect(res.status).toBe(200);
    expect(t.service.store.getZone('reading-room', READING_ROOM_ZONES[0].id)!.zone.name).toBe('Entrance (renamed)');
  });
});
