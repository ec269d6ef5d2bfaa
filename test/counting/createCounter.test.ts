import { describe, expect, it } from 'vitest';
import { createCounter } from '../../src/counting/createCounter.ts';
import { createMaskCounter } from '../../src/counting/createMaskCounter.ts';
import { createMask } from '../../src/domain/frame.ts';
import { createScene } from '../../src/frames/synthetic/index.ts';
import { packMask } from '../../src/vision/bitMask.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { mulberry } from '../helpers/random.ts';

// The counter's two ways through a frame: WebAssembly SIMD kernels with packed masks, and the
// JS stages with byte masks. Data: our own invented scenario, the synthetic stock room and
// reading room.

describe('createMaskCounter', () => {
  it('counts a packed mask exactly as the same mask in bytes, with the morphology in the kernels or in JS', () => {
    const rand = mulberry(17);
    const size = { width: 97, height: 61 };
    const zones = [
      { id: 'left', kind: 'room' as const, polygon: [[0, 0], [0.5, 0], [0.5, 1], [0, 1]] as [number, number][], personArea: 0.02 },
      { id: 'shelf', kind: 'shelf' as const, polygon: [[0.3, 0.1], [1, 0.1], [1, 0.6], [0.3, 0.6]] as [number, number][] },
    ];
    for (const [openRadius, closeRadius] of [[1, 2], [0, 2], [1, 0], [0, 0]]) {
      const bytes = createMaskCounter(size, zones, { openRadius, closeRadius });
      const bits = createMaskCounter(size, zones, { openRadius, closeRadius });
      const bitsInJs = createMaskCounter(size, zones, { openRadius, closeRadius, kernels: false });
      for (let n = 0; n < 6; n++) {
        const raw = createMask(size.width, size.height);
        for (let b = 0; b < 8; b++) {
          const x0 = Math.floor(rand() * 90);
          const y0 = Math.floor(rand() * 55);
          const w = 1 + Math.floor(rand() * 20);
          const h = 1 + Math.floor(rand() * 20);
          for (let y = y0; y < Math.min(61, y0 + h); y++) for (let x = x0; x < Math.min(97, x0 + w); x++) raw.data[y * 97 + x] = rand() < 0.9 ? 1 : 0;
        }
        for (let i = 0; i < raw.data.length; i++) if (rand() < 0.01) raw.data[i] = 1; // specks
        const want = bytes.count(raw);
        expect(bits.countBits(packMask(raw)), `open ${openRadius} close ${closeRadius}`).toEqual(want);
        expect(bits.lastMask().data).toEqual(bytes.lastMask().data);
        expect(bitsInJs.countBits(packMask(raw))).toEqual(want);
      }
    }
  });
});

describe('createCounter', () => {
  it('counts the same with the kernels and with the JS stages', () => {
    for (const id of ['stock-room', 'reading-room'] as const) {
      const scene = createScene(id, { width: 160, height: 120 });
      const model = fitSubspace(Array.from({ length: 60 }, (_, i) => scene.emptyFrameAt(i * 50).data), scene, { components: 6 });
      const withKernels = createCounter(model, scene.zones);
      const withJs = createCounter(model, scene.zones, { kernels: false });
      // The kernels hold the model in their own layout: at least a copy of the basis.
      expect(withKernels.kernelBytes).toBeGreaterThan(model.basis.byteLength);
      expect(withJs.kernelBytes).toBe(0);
      let zoneFrames = 0;
      let sameCount = 0;
      let fillError = 0;
      let maskPixels = 0;
      let maskDifferent = 0;
      for (let t = 0; t < 6000; t += 60) {
        const { frame } = scene.frameAt(t);
        const a = withKernels.count(frame);
        const b = withJs.count(frame);
        expect(a.noiseScale / b.noiseScale).toBeCloseTo(1, 4);
        expect(a.dffs / b.dffs).toBeCloseTo(1, 4);
        for (const zone of scene.zones) {
          zoneFrames++;
          if (a.zones[zone.id].count === b.zones[zone.id].count) sameCount++;
          fillError = Math.max(fillError, Math.abs(a.zones[zone.id].fill - b.zones[zone.id].fill));
        }
        const ma = withKernels.lastMask().data;
        const mb = withJs.lastMask().data;
        for (let i = 0; i < ma.length; i++) {
          maskPixels += mb[i];
          if (ma[i] !== mb[i]) maskDifferent++;
        }
      }
      // Only pixels within f32 rounding of their threshold can differ.
      expect(maskPixels, id).toBeGreaterThan(0);
      expect(maskDifferent, id).toBeLessThanOrEqual(Math.ceil(maskPixels * 1e-3));
      expect(sameCount / zoneFrames, id).toBeGreaterThanOrEqual(0.99);
      expect(fillError, id).toBeLessThan(0.002);
    }
  });
});
