import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { evaluate } from '../../src/commands/evaluate.ts';
import { parseCountTruth } from '../../src/commands/countsFile.ts';
import type { FrameItem } from '../../src/domain/frame.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import sharp from 'sharp';

// Our own synthetic reading room (invented data): the lamp switches at frames 495 and 1120, pairs
// of people walk together (merged blobs). Count truth from the renderer; mask truth from the same
// scene rendered without sensor noise (pixels that differ from the empty scene).
describe('evaluate: the subspace method against the MOG2 baseline', () => {
  it('is at least as good on the lighting changes and better on count MAE', async () => {
    const scene = createScene('reading-room', {});
    const clean = createScene('reading-room', { noise: 0 });
    const model = fitSubspace(Array.from({ length: 200 }, (_, i) => scene.emptyFrameAt(i * 15).data), scene);
    const dir = mkdtempSync(join(tmpdir(), 'residuum-eval-'));
    const counts = new Map<string, Record<string, number>>();
    const masks = new Map<string, string>();
    const step = 2;
    try {
      for (let t = 300; t < 1600; t += 10 * step) {
        const { truth } = scene.frameAt(t);
        counts.set(String(t), Object.fromEntries(Object.entries(truth).map(([z, v]) => [z, v.count])));
        const a = clean.frameAt(t).frame.data;
        const b = clean.emptyFrameAt(t).data;
        const mask = Buffer.from(Uint8Array.from(a, (v, i) => (Math.abs(v - b[i]) > 4 ? 255 : 0)));
        const file = join(dir, `${t}.png`);
        await sharp(mask, { raw: { width: scene.width, height: scene.height, channels: 1 } }).png().toFile(file);
        masks.set(String(t), file);
      }
      async function* frames(): AsyncIterable<FrameItem> {
        for (let t = 0; t < 1600; t += step) yield { name: String(t), frame: scene.frameAt(t).frame };
      }
      const reports = await evaluate(model, frames(), scene.zones, ['subspace', 'mog2'], { counts, masks });
      const [ours, mog2] = reports;
      const mae = (r: (typeof reports)[number]) => Object.values(r.zones).reduce((s, z) => s + z.mae, 0) / Object.keys(r.zones).length;
      console.log(`subspace: F ${ours.masks!.fMeasure.toFixed(3)}, PWC ${ours.masks!.pwc.toFixed(2)}, count MAE ${mae(ours).toFixed(3)}; ` +
        `MOG2: F ${mog2.masks!.fMeasure.toFixed(3)}, PWC ${mog2.masks!.pwc.toFixed(2)}, count MAE ${mae(mog2).toFixed(3)} ` +
        `(${ours.masks!.frames} scored frames)`);
      expect(ours.masks!.fMeasure).toBeGreaterThanOrEqual(mog2.masks!.fMeasure);
      expect(mae(ours)).toBeLessThan(mae(mog2));
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('reads count truth as a frames object or as count --json lines', () => {
    const a = parseCountTruth('{"frames": {"f1.png": {"tables": 2, "door": {"count": 1}}}}', 't.json');
    expect(a.get('f1.png')).toEqual({ tables: 2, door: 1 });
    const b = parseCountTruth('{"frame":"3","total":1,"zones":{"all":{"count":1,"fill":0.1}}}\n{"frame":"4","zones":{"all":{"count":0}}}\n', 't.jsonl');
    expect(b.get('4')).toEqual({ all: 0 });
    expect(() => parseCountTruth('{"frames": {"x": {"a": -1}}}', 't.json')).toThrow(/t\.json: frames\["x"\]\.a must be a count/);
    expect(() => parseCountTruth('[1, 2]', 't.json')).toThrow(/expected/);
  });
});
