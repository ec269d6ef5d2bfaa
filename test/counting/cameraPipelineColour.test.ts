import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';
import { validateConfig } from '../../src/config/loadConfig.ts';
import type { CameraConfig } from '../../src/config/loadConfig.ts';
import { createCameraPipeline } from '../../src/counting/cameraPipeline.ts';
import { decodeModel } from '../../src/counting/modelFile.ts';
import { storeModel } from '../../src/counting/storeModel.ts';
import { createShadowRoom } from '../../src/frames/synthetic/shadowRoom.ts';
import { openStore, type Store } from '../../src/store/index.ts';
import { fitChromaticity } from '../../src/vision/fitChromaticity.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import type { Subspace } from '../../src/vision/subspace.ts';

// Our own synthetic shadow room (invented data: the reading room in colour, people casting
// shadows) drives the live pipeline in grey and in colour mode; the store is real.
const size = { width: 160, height: 120 };
const scene = createShadowRoom(size);
let model: Subspace;
beforeAll(() => {
  const empty = Array.from({ length: 100 }, (_, i) => scene.emptyColourFrameAt(i * 30));
  model = { ...fitSubspace(empty.map((e) => e.frame.data), size), colour: fitChromaticity(empty.map((e) => e.colour.data), size) };
});

const dirs: string[] = [];
const stores: Store[] = [];
function tempStore(): Store {
  const dir = mkdtempSync(join(tmpdir(), 'residuum-colour-'));
  dirs.push(dir);
  const store = openStore(join(dir, 'r.db'), { timeZone: 'UTC' });
  stores.push(store);
  return store;
}
afterEach(() => {
  for (const s of stores.splice(0)) s.close();
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

function camera(colour: boolean): CameraConfig {
  return {
    id: colour ? 'colour' : 'grey',
    name: 'Camera',
    source: { kind: 'synthetic', scene: 'shadow-room', id: 'cam', size, ...(colour && { colour }) },
    learnSeconds: 2,
    sampleSeconds: 1,
    smoothing: { window: 1, method: 'median' },
    threshold: 3,
    adaptToDrift: false,
    zones: scene.zones,
  };
}

function pipelineFor(config: CameraConfig, withModel: boolean) {
  const store = tempStore();
  store.upsertCamera({ id: config.id, name: config.name });
  for (const zone of config.zones) store.upsertZone(config.id, zone);
  const learned: Subspace[] = [];
  const pipeline = createCameraPipeline({
    camera: config,
    store,
    ...(withModel && { model }),
    learn: (frames, s) => fitSubspace(frames, s),
    onModel: (m) => learned.push(m),
  });
  return { store, pipeline, learned };
}

describe('camera pipeline in colour mode', () => {
  it('counts the shadow room better with the colour frames than in grey', () => {
    const grey = pipelineFor(camera(false), true);
    const colour = pipelineFor(camera(true), true);
    let greyError = 0;
    let colourError = 0;
    const t0 = Date.UTC(2026, 0, 5, 9);
    for (let t = 200; t < 2600; t += 20) {
      const { frame, colour: picture, truth } = scene.colourFrameAt(t);
      grey.pipeline.handlers.frame(frame, t0 + t * 100, picture);
      colour.pipeline.handlers.frame(frame, t0 + t * 100, picture);
      for (const [which, run] of [['grey', grey], ['colour', colour]] as const) {
        for (const zone of run.pipeline.live().zones) {
          const error = Math.abs(zone.count - (truth[zone.id]?.count ?? 0));
          if (which === 'grey') greyError += error;
          else colourError += error;
        }
      }
    }
    grey.pipeline.stop();
    colour.pipeline.stop();
    console.log(`live pipeline, shadow room, 120 frames: summed count error grey ${greyError}, colour ${colourError}`);
    // The grey camera counts the camera-side shadows as people too; colour mode clears them.
    expect(colourError).toBeLessThan(greyError * 0.6);
  });

  it('learns the colour statistics with the model from the live source, and stores them', () => {
    const { store, pipeline, learned } = pipelineFor(camera(true), false);
    const t0 = Date.UTC(2026, 0, 5, 9);
    for (let i = 0; i < 30; i++) {
      const { frame, colour } = scene.emptyColourFrameAt(i * 40);
      pipeline.handlers.frame(frame, t0 + i * 100, colour);
    }
    pipeline.stop();
    expect(learned).toHaveLength(1);
    expect(learned[0].colour?.width).toBe(size.width);
    expect(learned[0].colour?.frameCount).toBe(learned[0].frameCount);
    // Stored as the worker stores it: the model file with its colour statistics (version 2).
    storeModel(store, 'colour', learned[0], 'live source');
    const stored = decodeModel(Buffer.from(store.latestModel('colour')!.data), 'stored');
    expect(Array.from(stored.colour!.mean.subarray(0, 6))).toEqual(Array.from(learned[0].colour!.mean.subarray(0, 6)));
  });

  it('is refused in the configuration where the source has no colour', () => {
    const config = (source: Record<string, unknown>) => ({ site: { name: 'Test', timeZone: 'UTC' }, cameras: [{ id: 'a', source }] });
    expect(() => validateConfig(config({ kind: 'ffmpeg', input: 'x.mp4', colour: true }), 'site.yaml')).toThrow(/cameras\[0\]\.source\.colour.*ffmpeg/);
    expect(() => validateConfig(config({ kind: 'synthetic', scene: 'reading-room', colour: true }), 'site.yaml')).toThrow(/only the synthetic scene shadow-room/);
    const ok = validateConfig(config({ kind: 'synthetic', scene: 'shadow-room', colour: true }), 'site.yaml');
    expect(ok.cameras[0].source.colour).toBe(true);
  });
});
