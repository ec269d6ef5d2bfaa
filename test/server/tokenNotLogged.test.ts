import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { startService } from '../../src/commands/run.ts';
import { loadConfig } from '../../src/config/loadConfig.ts';
import { testConfig } from '../service/testConfig.ts';

describe('the admin key', () => {
  it('never appears in the service log, whatever is sent', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'residuum-token-log-'));
    const lines: string[] = [];
    const service = await startService(loadConfig(testConfig(dir)), { dataDir: join(dir, 'data'), port: 0, log: (l) => lines.push(l) });
    try {
      const key = service.newTokens.admin!;
      expect(key.length).toBeGreaterThan(20);
      const base = `http://127.0.0.1:${service.port}`;
      const zonesUrl = `${base}/api/cameras/reading-room/zones`;
      const zones = ((await (await fetch(zonesUrl)).json()) as { zones: unknown[] }).zones;
      // A good change, a bad change, wrong keys (some of them the key with a character changed) and a burst of failures.
      await fetch(zonesUrl, { method: 'PUT', headers: { Authorization: `Bearer ${key}`, 'Content-Type': 'application/json' }, body: JSON.stringify({ zones }) });
      await fetch(zonesUrl, { method: 'PUT', headers: { Authorization: `Bearer ${key}`, 'Content-Type': 'application/json' }, body: '{"zones": [{"id": "x"}]}' });
      for (let i = 0; i < 14; i++) {
        await fetch(zonesUrl, { method: 'PUT', headers: { Authorization: `Bearer ${key.slice(0, -1)}${i % 10}`, 'Content-Type': 'application/json' }, body: '{}' });
      }
      await fetch(`${base}/api/cameras/reading-room/learn`, { method: 'POST', headers: { Authorization: `Bearer ${key}`, 'Content-Type': 'application/json' }, body: '{"seconds": 1}' });
      expect(lines.length).toBeGreaterThan(0);
      // Failed logins are logged (without the key): where from and what was asked.
      const failures = lines.filter((l) => l.startsWith('auth: a wrong key from '));
      expect(failures.length).toBeGreaterThanOrEqual(10);
      expect(failures[0]).toMatch(/^auth: a wrong key from (::ffff:)?127\.0\.0\.1 on PUT \/api\/cameras\/reading-room\/zones \(1 in the last minute\)$/);
      expect(lines.some((l) => /^auth: 127\.0\.0\.1 .*blocked for \d+ s after 10 wrong keys/.test(l.replace('::ffff:', '')))).toBe(true);
      for (const line of lines) {
        expect(line).not.toContain(key);
        expect(line).not.toContain(key.slice(0, 16));
      }
    } finally {
      await service.stop();
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
