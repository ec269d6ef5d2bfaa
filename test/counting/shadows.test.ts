import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { evaluate, type MethodReport } from '../../src/commands/evaluate.ts';
import type { ColourFrameItem } from '../../src/domain/colourFrame.ts';
import { createShadowRoom } from '../../src/frames/synthetic/shadowRoom.ts';
import { fitChromaticity } from '../../src/vision/fitChromaticity.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';

// Our own synthetic shadow room (invented data): the reading room with its lamp and merged pairs,
// in colour, every visitor casting a soft shadow on the floor. Count truth from the renderer;
// mask truth with CDnet labels (Goyette et al. 2012: 255 moving, 50 shadow, 0 static) from the
// same scene rendered without noise. Shadow pixels are background: detecting one is a false
// positive. The baseline is opencv.js BackgroundSubtractorMOG2 with detectShadows on (its own
// shadow detection, Prati et al. 2003), fed grey and fed colour.
describe('colour mode on a scene with shadows', () => {
  it('cuts shadow false positives and counts at least as well as MOG2', async () => {
    const scene = createShadowRoom({});
    const clean = createShadowRoom({ noise: 0 });
    const empty = Array.from({ length: 200 }, (_, i) => scene.emptyColourFrameAt(i * 15));
    const model = fitSubspace(empty.map((e) => e.frame.data), scene);
    const colour = fitChromaticity(empty.map((e) => e.colour.data), scene);
    empty.length = 0;
    const dir = mkdtempSync(join(tmpdir(), 'residuum-shadows-'));
    const counts = new Map<string, Record<string, number>>();
    const masks = new Map<string, string>();
    const step = 2;
    try {
      for (let t = 300; t < 1600; t += 10 * step) {
        const { truth, labels } = clean.colourFrameAt(t);
        counts.set(String(t), Object.fromEntries(Object.entries(truth).map(([z, v]) => [z, v.count])));
        const file = join(dir, `${t}.png`);
        await sharp(Buffer.from(labels), { raw: { width: scene.width, height: scene.height, channels: 1 } }).png().toFile(file);
        masks.set(String(t), file);
      }
      async function* frames(): AsyncIterable<ColourFrameItem> {
        for (let t = 0; t < 1600; t += step) {
          const { frame, colour: c } = scene.colourFrameAt(t);
          yield { name: String(t), frame, colour: c };
        }
      }
      const reports = await evaluate(model, frames(), scene.zones, ['subspace', 'subspace-colour', 'mog2', 'mog2-colour'], { counts, masks }, { colour });
      const [grey, inColour, mog2, mog2Colour] = reports;
      const mae = (r: MethodReport) => Object.values(r.zones).reduce((s, z) => s + z.mae, 0) / Object.keys(r.zones).length;
      for (const r of reports) {
        console.log(`${r.method.padEnd(15)} F ${r.masks!.fMeasure.toFixed(3)}, precision ${r.masks!.precision.toFixed(3)}, recall ${r.masks!.recall.toFixed(3)}, ` +
          `shadow pixels detected ${(100 * r.masks!.shadowFpr).toFixed(1)} %, count MAE ${mae(r).toFixed(3)} (${r.masks!.frames} scored frames)`);
      }
      // Shadows: the grey subspace flags most shadow pixels; colour mode at most a tenth of that
      // and under 5 % of them.
      expect(grey.masks!.shadowFpr).toBeGreaterThan(0.5);
      expect(inColour.masks!.shadowFpr).toBeLessThan(0.1 * grey.masks!.shadowFpr);
      expect(inColour.masks!.shadowFpr).toBeLessThan(0.05);
      expect(inColour.masks!.fMeasure).toBeGreaterThan(grey.masks!.fMeasure + 0.1);
      // Counts: better than grey, and at least as good as MOG2 with its own shadow detection.
      expect(mae(inColour)).toBeLessThan(mae(grey));
      expect(mae(inColour)).toBeLessThanOrEqual(mae(mog2));
      expect(mae(inColour)).toBeLessThanOrEqual(mae(mog2Colour));
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 600_000);
});
