import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { stringify } from 'yaml';
import { startService, type RunningService } from '../../src/commands/run.ts';
import { loadConfig } from '../../src/config/loadConfig.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { mulberry } from '../helpers/random.ts';
import { jsonOf, READING_ROOM_ZONES } from '../server/testService.ts';
import { dropSnapshots, noiseFrames } from './dropSnapshots.ts';
import { waitUntil } from './waitUntil.ts';

// The service end to end: a camera that uploads snapshots into a drop folder learns the empty
// scene at its first start, is asked from the dashboard's API to learn again, and is then sent
// frames that are not of one scene (noise). Snapshots are our synthetic reading room (invented,
// nobody real). A snapshot's time is its file's modification time, set here 100 ms apart, so the
// learning seconds pass in scene time however fast the files are written.
const size = { width: 160, height: 120 };
const scene = createScene('reading-room', size);
const root = mkdtempSync(join(tmpdir(), 'residuum-relearn-'));
const drop = join(root, 'drop');
mkdirSync(drop);
let service: RunningService | undefined;
afterAll(async () => {
  await service?.stop();
  rmSync(root, { recursive: true, force: true });
});

const snapshots = dropSnapshots(drop, size, Date.now() - 3_600_000);
const upload = snapshots.upload;

describe('learning again from a live camera', () => {
  it('keeps counting with the model it had when the new one is poor, and says why', async () => {
    const configFile = join(root, 'residuum.yaml');
    writeFileSync(
      configFile,
      stringify({
        site: { name: 'Relearn test', timeZone: 'UTC' },
        server: { host: '127.0.0.1', port: 0 },
        models: { keep: 3 },
        cameras: [
          {
            id: 'door',
            name: 'Door',
            source: { kind: 'drop-folder', path: drop, scanIntervalMs: 50, settleMs: 0 },
            size: [size.width, size.height],
            learnSeconds: 4,
            sampleSeconds: 1,
            zones: READING_ROOM_ZONES,
          },
        ],
      }),
    );
    service = await startService(loadConfig(configFile), { dataDir: join(root, 'data'), port: 0 });
    const { store, control } = service;
    const base = `http://127.0.0.1:${service.port}`;
    const admin = { Authorization: `Bearer ${service.newTokens.admin}`, 'Content-Type': 'application/json' };

    // First start without a model: it learns from its first 4 s of (empty) snapshots, and uses
    // what it learned whatever its verdict (something beats nothing).
    expect(control.learnStatus('door')?.state).toBe('learning');
    await upload(Array.from({ length: 45 }, (_, i) => scene.emptyFrameAt(i * 70).data));
    await waitUntil(() => control.learnStatus('door')?.state === 'done', { what: 'the first learning' });
    const firstId = store.activeModelId('door');
    expect(firstId).toBeDefined();
    expect(store.listEvents({ camera: 'door', type: 'model-learned' })).toHaveLength(1);

    // "Learn again" from the dashboard, while frames of no one scene arrive.
    const res = await fetch(`${base}/api/cameras/door/learn`, { method: 'POST', headers: admin, body: JSON.stringify({ seconds: 2 }) });
    expect(res.status).toBe(202);
    await upload(noiseFrames(30, size, mulberry(9)));
    await waitUntil(() => control.learnStatus('door')?.state === 'rejected', { what: 'the second learning to be rejected' });

    // What the dashboard reads: the status says it was not used, and why.
    const learn = await jsonOf(await fetch(`${base}/api/cameras/door/learn`));
    expect(learn.status).toMatchObject({ state: 'rejected', verdict: { level: 'poor' } });
    expect(learn.status.reason).toBe(learn.status.verdict.findings[0]);
    expect(learn.model.id).toBe(firstId);
    // The store: the model in use is the first; the new one is kept, rejected; an event says why.
    expect(store.activeModelId('door')).toBe(firstId);
    expect(store.listModels('door').map((m) => [m.id, m.active, m.rejected])).toEqual([
      [firstId, true, false],
      [learn.status.modelId, false, true],
    ]);
    const [event] = store.listEvents({ camera: 'door', type: 'learning-rejected' });
    expect(event.detail).toMatchObject({ model: learn.status.modelId, reason: learn.status.reason });
    expect((event.detail as { text: string }).text).toMatch(/^The new empty scene was not used: .+\. Counting goes on with the model from before\.$/);

    // It counts on with the first model: people in the next snapshots are counted.
    // check: the synthetic scene's own truth: people at the reading tables in all these frames
    const people = Array.from({ length: 30 }, (_, i) => scene.frameAt(600 + i));
    expect(people.every((f) => f.truth.tables.count > 1)).toBe(true);
    const rejectedAt = snapshots.next();
    await upload(people.map((f) => f.frame.data));
    await waitUntil(
      () => {
        const after = store.listSamples({ camera: 'door', zone: 'tables' }).filter((s) => s.time > rejectedAt);
        return after.length >= 2 && after.every((s) => s.value > 0);
      },
      { what: 'people counted with the first model' },
    );
    expect(service.cameras.get('door')!.live().modelId).toBe(firstId);
  });
});
