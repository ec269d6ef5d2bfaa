import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterEach, describe, expect, it } from 'vitest';
import { openStore, type Sample } from '../../src/store/index.ts';
import { burstSchedule } from './fixtures/burstSchedule.ts';
import { spawnNode } from './spawnResiduum.ts';

// Durability (src/store/samples.ts): WAL with synchronous=NORMAL, so a committed transaction
// survives the process being killed. check: SQLite documentation, PRAGMA synchronous —
// "Transactions are durable across application crashes regardless of the synchronous setting or
// journal mode" (https://www.sqlite.org/pragma.html#pragma_synchronous).

/** Rounds per run; the stress run of the durability issue sets RESIDUUM_KILL_ROUNDS=50. */
const ROUNDS = Number(process.env.RESIDUUM_KILL_ROUNDS ?? 5);
const writer = fileURLToPath(new URL('./fixtures/burstWriter.ts', import.meta.url));

const dirs: string[] = [];
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

interface Round {
  readonly seed: number;
  /** Committed lines after which the kill is sent, and the extra delay, ms. */
  readonly killAfter: number;
  readonly delayMs: number;
}

/** Runs the writer, kills it with SIGKILL after `killAfter` printed commits (+ delay); returns the printed sample times. */
async function burstAndKill(file: string, round: Round): Promise<number[]> {
  const child = spawnNode(['--import', 'tsx', writer, file, String(round.seed)]);
  let scheduled = false;
  const onData = () => {
    if (scheduled) return;
    const lines = child.stdout().toString('latin1').split('\n').filter((l) => l.startsWith('committed ')).length;
    if (lines >= round.killAfter) {
      scheduled = true;
      setTimeout(() => child.child.kill('SIGKILL'), round.delayMs);
    }
  };
  child.child.stdout!.on('data', onData);
  const exit = await child.exit(120_000);
  expect(exit, `${JSON.stringify(round)}: the writer ended by itself; stderr:\n${child.stderr().toString('utf8')}`).toEqual({ code: null, signal: 'SIGKILL' });
  const text = child.stdout().toString('latin1');
  expect(text.startsWith('ready\n')).toBe(true);
  // Only whole lines count: a line is printed in one write after its commit.
  const complete = text.slice(0, text.lastIndexOf('\n') + 1).split('\n').filter((l) => l.startsWith('committed '));
  return complete.map((l) => Number(l.slice('committed '.length)));
}

describe('durability: a store killed with SIGKILL mid-burst', () => {
  it(`keeps every printed commit, stays intact and consistent (${ROUNDS} rounds)`, async () => {
    const base = Date.now() >>> 0;
    for (let r = 0; r < ROUNDS; r++) {
      const round: Round = { seed: (base + r * 7919) >>> 0, killAfter: 200 + Math.floor(Math.random() * 800), delayMs: Math.floor(Math.random() * 30) };
      const what = `round ${r + 1} ${JSON.stringify(round)}`;
      const dir = mkdtempSync(join(tmpdir(), 'residuum-kill-'));
      dirs.push(dir);
      const file = join(dir, 'residuum.db');
      const printed = await burstAndKill(file, round);
      expect(printed.length, what).toBeGreaterThanOrEqual(round.killAfter);

      const store = openStore(file);
      try {
        expect(store.db.pragma('integrity_check', { simple: true }), what).toBe('ok');
        expect(store.db.pragma('foreign_key_check'), what).toEqual([]);

        // Every printed sample is there.
        const stored = store.db.prepare('SELECT zone, time, interval_ms AS intervalMs, value, kind, quality FROM samples ORDER BY time').all() as Omit<Sample, 'camera'>[];
        const times = new Set(stored.map((s) => s.time));
        const missing = printed.filter((t) => !times.has(t));
        expect(missing, `${what}: printed but not stored`).toEqual([]);

        // More exactly: the stored samples are the schedule's first N, N ends a transaction (a
        // batch is all or nothing), and N is the printed count or, when the kill came between a
        // commit and its line, the next transaction's end.
        const ends: number[] = [];
        const expected: Omit<Sample, 'camera'>[] = [];
        for (const batch of burstSchedule(round.seed)) {
          for (const { camera: _camera, ...s } of batch) expected.push(s);
          ends.push(expected.length);
          if (expected.length > stored.length + 100) break;
        }
        expect(ends, `${what}: printed lines end a transaction`).toContain(printed.length);
        expect(ends, `${what}: stored samples end a transaction`).toContain(stored.length);
        const next = ends[ends.indexOf(printed.length) + 1];
        expect([printed.length, next], what).toContain(stored.length);
        expect(stored, what).toEqual(expected.slice(0, stored.length).sort((a, b) => a.time - b.time));

        // The incremental rollups equal a rebuild from the samples.
        const before = store.listRollups();
        expect(before.length, what).toBeGreaterThan(0);
        store.rebuildRollups();
        expect(store.listRollups(), what).toEqual(before);
      } finally {
        store.close();
      }
    }
  }, 120_000 + ROUNDS * 120_000);
});
