import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parse } from 'yaml';
import { afterEach, describe, expect, it, onTestFinished } from 'vitest';
import { NEW_KEYS_FILE } from '../../src/commands/run.ts';
import { DISPLAY_SETTING } from '../../src/server/displaySettings.ts';
import { openStore } from '../../src/store/index.ts';
import { spawnResiduum } from './spawnResiduum.ts';
import { testConfig } from './testConfig.ts';

// The real service (`residuum run`, its camera thread writing samples) killed with SIGKILL while
// dashboard edits are in flight, then started again on the same data folder, round after round.
// Nothing acknowledged may be lost: every zone change and display setting answered 200 is in the
// database after the kill and counted after the restart. check: SQLite documentation, PRAGMA
// synchronous — "Transactions are durable across application crashes regardless of the
// synchronous setting or journal mode" (https://www.sqlite.org/pragma.html#pragma_synchronous).

/** Rounds per run; `npm run crash` sets RESIDUUM_KILL_ROUNDS=50. */
const ROUNDS = Number(process.env.RESIDUUM_KILL_ROUNDS ?? 3);

const dirs: string[] = [];
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

interface Acknowledged {
  /** Entrance capacity of every zone change answered 200, in order. */
  readonly capacities: number[];
  /** Low-stock marks answered 200. */
  readonly marks: Record<string, number>;
}

describe('durability: the service killed with SIGKILL while the dashboard edits', () => {
  it(`loses no acknowledged edit, stays intact and consistent, and counts with the edits after a restart (${ROUNDS} rounds)`, async () => {
    const dir = mkdtempSync(join(tmpdir(), 'residuum-kill-service-'));
    dirs.push(dir);
    const configFile = testConfig(dir);
    const data = join(dir, 'data');
    const zones = (parse(readFileSync(configFile, 'utf8')) as { cameras: { zones: Record<string, unknown>[] }[] }).cameras[0].zones;
    const done: Acknowledged = { capacities: [], marks: {} };
    let key = '';
    let edit = 0;
    const killedAfter: number[] = [];
    const children: ReturnType<typeof spawnResiduum>[] = [];
    // A round that fails before its kill leaves no service running.
    onTestFinished(() => {
      for (const c of children) if (c.child.exitCode === null && c.child.signalCode === null) c.child.kill('SIGKILL');
    });
    for (let round = 0; round < ROUNDS; round++) {
      const what = `round ${round + 1}`;
      const run = spawnResiduum(['run', '--config', configFile, '--data', data]);
      children.push(run);
      const [, port] = await run.waitForOutput(/serving the API at http:\/\/127\.0\.0\.1:(\d+)\//, 60_000);
      if (round === 0) key = /^ {2}([A-Za-z0-9_-]{43})$/m.exec(readFileSync(join(data, NEW_KEYS_FILE), 'utf8'))![1];
      const base = `http://127.0.0.1:${port}`;
      const headers = { Authorization: `Bearer ${key}`, 'Content-Type': 'application/json' };

      // After the restart: counting with the last acknowledged zones (or the one in flight at the kill).
      if (done.capacities.length > 0) {
        const now = (await (await fetch(`${base}/api/cameras/reading-room/zones`)).json()) as { zones: { id: string; capacity: number }[] };
        const capacity = now.zones.find((z) => z.id === 'entrance')!.capacity;
        expect([done.capacities.at(-1), done.capacities.at(-1)! + 1], `${what}: zones after the restart`).toContain(capacity);
      }

      // Edits in flight, two at a time (a zone change and a display setting), until the kill.
      const killAt = 5 + Math.floor(Math.random() * 25);
      let killed = false;
      let sent = 0;
      const editor = async () => {
        while (!killed) {
          const n = ++edit;
          sent++;
          if (sent === killAt) setTimeout(() => {
            killed = true;
            run.child.kill('SIGKILL');
          }, Math.floor(Math.random() * 20));
          const capacity = n;
          const body = JSON.stringify({ zones: zones.map((z) => (z.id === 'entrance' ? { ...z, capacity } : z)) });
          const mark = `reading-room/e${n}`;
          const [zonesRes, settingsRes] = await Promise.allSettled([
            fetch(`${base}/api/cameras/reading-room/zones`, { method: 'PUT', headers, body }),
            fetch(`${base}/api/settings`, { method: 'PUT', headers, body: JSON.stringify({ lowStock: { [mark]: (n % 100) / 100 } }) }),
          ]);
          if (zonesRes.status === 'fulfilled' && zonesRes.value.status === 200) done.capacities.push(capacity);
          if (settingsRes.status === 'fulfilled' && settingsRes.value.status === 200) done.marks[mark] = (n % 100) / 100;
        }
      };
      await editor();
      const exit = await run.exit(30_000);
      expect(exit.signal, `${what}: killed`).toBe('SIGKILL');
      killedAfter.push(sent);

      const store = openStore(join(data, 'residuum.db'));
      try {
        expect(store.db.pragma('integrity_check', { simple: true }), what).toBe('ok');
        expect(store.db.pragma('foreign_key_check'), what).toEqual([]);
        // Every acknowledged zone change is in the history, in order; the zone holds the last one
        // (or the change in flight at the kill, committed before its answer was sent).
        const history = store.zoneHistory('reading-room', 'entrance').filter((h) => h.field === 'capacity').map((h) => h.new as number);
        expect(history.filter((c) => done.capacities.includes(c)), `${what}: acknowledged zone changes`).toEqual(done.capacities);
        const capacity = store.getZone('reading-room', 'entrance')!.zone.capacity!;
        expect([done.capacities.at(-1), done.capacities.at(-1)! + 1], `${what}: the zone now`).toContain(capacity);
        // Every acknowledged display setting.
        const stored = (store.getSetting(DISPLAY_SETTING) as { lowStock: Record<string, number> }).lowStock;
        for (const [mark, value] of Object.entries(done.marks)) expect(stored[mark], `${what}: ${mark}`).toBe(value);
        // The camera thread's samples and their rollups: consistent.
        const before = store.listRollups();
        store.rebuildRollups();
        expect(store.listRollups(), what).toEqual(before);
      } finally {
        store.close();
      }
    }
    expect(done.capacities.length).toBeGreaterThanOrEqual(ROUNDS * 4);
    console.log(`killed ${ROUNDS} times after ${killedAfter.join(', ')} edits sent; ${done.capacities.length} zone changes and ${Object.keys(done.marks).length} settings acknowledged, all kept`);
  }, 60_000 + ROUNDS * 60_000);
});
