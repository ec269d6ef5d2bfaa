import { createDriftingCounter } from '../src/counting/createDriftingCounter.ts';
import { createReadingRoom } from '../src/frames/synthetic/readingRoom.ts';
import { withSlowDrift } from '../src/frames/synthetic/slowDrift.ts';
import { fitSubspace } from '../src/vision/fitSubspace.ts';
const base = createReadingRoom({ width: 320, height: 240, frameRate: 2, noise: 0 });
const start = base.lightingPeriod;
const scene = withSlowDrift(base, { start, duration: 600, noise: 2.5, window: 0.15, beam: { from: [0.2, 0.72], to: [0.85, 0.66], size: [0.3, 0.34], boost: 0.5, softness: 0.12 } });
const model = fitSubspace(Array.from({ length: 200 }, (_, i) => scene.emptyFrameAt(Math.floor((i * start) / 200)).data), scene, { components: 8 });
let clock = 0;
const c = createDriftingCounter(model, scene.zones, { threshold: 3, timeStages: true, clock: () => clock });
const frames = Array.from({ length: 300 }, (_, i) => scene.frameAt(start + i).frame);
let total = 0;
for (let r = 0; r < 2; r++) for (let i = 0; i < frames.length; i++) {
  clock = (r * 300 + i) * 500;
  const t0 = performance.now();
  c.count(frames[i]);
  if (r === 1) total += performance.now() - t0;
}
console.log('mean ms', (total / 300).toFixed(3), c.driftState());
