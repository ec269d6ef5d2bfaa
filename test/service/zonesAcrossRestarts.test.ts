import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { stringify } from 'yaml';
import { startService, type RunningService } from '../../src/commands/run.ts';
import { loadConfig } from '../../src/config/loadConfig.ts';
import { saveModel } from '../../src/counting/modelFile.ts';
import { storeModel } from '../../src/counting/storeModel.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { READING_ROOM_ZONES } from '../server/testService.ts';

// Issue: zones drawn in the dashboard were written over by the configuration's zones at every
// start. The rule now (README, "Zones: the file seeds, the dashboard wins"): the file seeds the
// zones once; afterwards the database's zones are counted, and only what changed in the file
// itself is applied, with a settings-changed event naming it.

const dirs: string[] = [];
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

function writeConfig(file: string, zones: readonly object[], model?: string): void {
  writeFileSync(
    file,
    stringify({
      site: { name: 'Zones across restarts', timeZone: 'Europe/Berlin' },
      server: { host: '127.0.0.1', port: 0 },
      cameras: [{ id: 'reading-room', source: { kind: 'synthetic', scene: 'reading-room', speed: 10 }, size: [160, 120], sampleSeconds: 2, zones, ...(model && { model }) }],
    }),
  );
}

async function start(configFile: string, dataDir: string): Promise<RunningService> {
  return startService(loadConfig(configFile), { dataDir, port: 0 });
}

async function zonesOf(service: RunningService): Promise<Record<string, Record<string, unknown>>> {
  const body = (await (await fetch(`http://127.0.0.1:${service.port}/api/cameras/reading-room/zones`)).json()) as { zones: { id: string }[] };
  return Object.fromEntries(body.zones.map((z) => [z.id, z]));
}

describe('zones across restarts', () => {
  it('keeps the dashboard’s zones at a restart and applies only what changed in the file, with an event', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'residuum-zones-restart-'));
    dirs.push(dir);
    const configFile = join(dir, 'site.yaml');
    const dataDir = join(dir, 'data');
    writeConfig(configFile, READING_ROOM_ZONES);

    // First start: the file seeds the zones. The dashboard then moves the entrance, changes its
    // capacity and adds a zone.
    let service = await start(configFile, dataDir);
    const key = service.newTokens.admin!;
    const drawn = [
      { ...READING_ROOM_ZONES[0], capacity: 7, polygon: [[0.05, 0.62], [0.28, 0.62], [0.28, 0.97], [0.05, 0.97]] },
      READING_ROOM_ZONES[1],
      READING_ROOM_ZONES[2],
      { id: 'lounge', name: 'Lounge', kind: 'room', capacity: 3, polygon: [[0.5, 0.1], [0.9, 0.1], [0.9, 0.3], [0.5, 0.3]] },
    ];
    const put = await fetch(`http://127.0.0.1:${service.port}/api/cameras/reading-room/zones`, {
      method: 'PUT',
      headers: { Authorization: `Bearer ${key}`, 'Content-Type': 'application/json' },
      body: JSON.stringify({ zones: drawn }),
    });
    expect(put.status).toBe(200);
    await service.stop();

    // Same file, restart: the dashboard's zones are still the ones counted.
    service = await start(configFile, dataDir);
    try {
      const zones = await zonesOf(service);
      expect(Object.keys(zones).sort()).toEqual(['entrance', 'lounge', 'stacks', 'tables']);
      expect(zones.entrance.capacity).toBe(7);
      expect(zones.entrance.polygon).toEqual(drawn[0].polygon);
      expect(service.store.listEvents({ type: 'settings-changed' }).filter((e) => (e.detail as { by?: string }).by === 'configuration')).toEqual([]);
    } finally {
      await service.stop();
    }

    // The file changes: the stacks' capacity 6 → 8, the tables zone taken out. Applied on top of
    // the dashboard's zones; the entrance and the lounge keep the dashboard's settings.
    writeConfig(configFile, [READING_ROOM_ZONES[0], { ...READING_ROOM_ZONES[1], capacity: 8 }]);
    service = await start(configFile, dataDir);
    try {
      const zones = await zonesOf(service);
      expect(Object.keys(zones).sort()).toEqual(['entrance', 'lounge', 'stacks']);
      expect(zones.stacks.capacity).toBe(8);
      expect(zones.entrance.capacity).toBe(7);
      expect(zones.entrance.polygon).toEqual(drawn[0].polygon);
      const events = service.store.listEvents({ type: 'settings-changed' }).filter((e) => (e.detail as { by?: string }).by === 'configuration');
      expect(events).toHaveLength(1);
      const text = (events[0].detail as { text: string }).text;
      expect(text).toContain('stacks capacity 6 → 8');
      expect(text).toContain('zone tables removed');
    } finally {
      await service.stop();
    }

    // And once more without a change in the file: nothing moves, no new event.
    service = await start(configFile, dataDir);
    try {
      const zones = await zonesOf(service);
      expect(Object.keys(zones).sort()).toEqual(['entrance', 'lounge', 'stacks']);
      expect(service.store.listEvents({ type: 'settings-changed' }).filter((e) => (e.detail as { by?: string }).by === 'configuration')).toHaveLength(1);
    } finally {
      await service.stop();
    }
  }, 120_000);

  it('keeps the model the admin chose at a restart, unless the configured model file changed', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'residuum-model-restart-'));
    dirs.push(dir);
    const configFile = join(dir, 'site.yaml');
    const dataDir = join(dir, 'data');
    const modelFile = join(dir, 'room.rsdm');
    const size = { width: 160, height: 120 };
    const scene = createScene('reading-room', size);
    const learn = (offset: number, n: number) => fitSubspace(Array.from({ length: n }, (_, i) => scene.emptyFrameAt(i * 50 + offset).data), size);
    await saveModel(modelFile, learn(0, 40));
    writeConfig(configFile, READING_ROOM_ZONES, modelFile);

    let service = await start(configFile, dataDir);
    const key = service.newTokens.admin!;
    const fromFile = service.cameras.get('reading-room')!.modelId()!;
    const chosen = storeModel(service.store, 'reading-room', learn(7, 30), 'live source', { activate: false });
    const res = await fetch(`http://127.0.0.1:${service.port}/api/cameras/reading-room/models/${chosen}/activate`, { method: 'POST', headers: { Authorization: `Bearer ${key}` } });
    expect(res.status).toBe(200);
    await service.stop();

    // The file did not change: the admin's choice stays.
    service = await start(configFile, dataDir);
    try {
      expect(service.cameras.get('reading-room')!.modelId()).toBe(chosen);
    } finally {
      await service.stop();
    }

    // A new model in the file: it is put to use.
    await saveModel(modelFile, learn(13, 50));
    service = await start(configFile, dataDir);
    try {
      const id = service.cameras.get('reading-room')!.modelId()!;
      expect(id).not.toBe(chosen);
      expect(id).not.toBe(fromFile);
      expect(service.cameras.get('reading-room')!.model()?.frameCount).toBe(50);
    } finally {
      await service.stop();
    }
  }, 120_000);
});
