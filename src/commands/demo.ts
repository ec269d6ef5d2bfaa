import { setTimeout as sleep } from 'node:timers/promises';
import { createCounter } from '../counting/createCounter.ts';
import { modelVerdict } from '../counting/modelVerdict.ts';
import { createScene, sceneIds } from '../frames/synthetic/index.ts';
import { fitSubspace } from '../vision/fitSubspace.ts';
import { numberOption, parseOptions, UsageError } from './args.ts';

export const demoUsage = `residuum demo [--scene reading-room|stock-room] [--speed S] [--frames N]

Counts a built-in synthetic scene live in the terminal, next to its true counts: learns the empty
scene first, then counts each frame as it is rendered. The scene is invented; it shows no one.
  --scene   which scene (default reading-room)
  --speed   scene seconds per real second (default 4)
  --frames  stop after N frames (default: run until interrupted)`;

/** Scene frames between two learning frames, so learning spans the scene's lighting changes. */
const learnStride = 15;

/** `residuum demo`: the synthetic scene counted live. */
export async function demoCommand(argv: string[], io = { out: process.stdout, err: process.stderr }): Promise<number> {
  const v = parseOptions(argv, { scene: { type: 'string' }, speed: { type: 'string' }, frames: { type: 'string' } });
  const id = v.scene ?? 'reading-room';
  if (!(sceneIds as readonly string[]).includes(id)) throw new UsageError(`--scene must be one of ${sceneIds.join(', ')}, got "${id}"`);
  const speed = numberOption(v.speed, 'speed', { min: 0.1, max: 1000 }) ?? 4;
  const limit = numberOption(v.frames, 'frames', { min: 1, integer: true }) ?? Infinity;
  const scene = createScene(id as (typeof sceneIds)[number], {});

  io.out.write(`Residuum demo: ${scene.name} (synthetic, ${scene.width}×${scene.height}); learning the empty scene…\n`);
  const learning = Array.from({ length: 200 }, (_, i) => scene.emptyFrameAt(i * learnStride).data);
  const model = fitSubspace(learning, scene);
  const verdict = modelVerdict(model);
  io.out.write(`model: ${model.components} components, ${(model.retainedVariance * 100).toFixed(1)} % of the variation, ` +
    `noise ${verdict.medianNoise.toFixed(1)} grey levels: ${verdict.level}\n`);
  const counter = createCounter(model, scene.zones);
  const interactive = (io.out as NodeJS.WriteStream).isTTY === true;
  const interval = 1000 / (scene.frameRate * speed);
  let stopped = false;
  const stop = () => { stopped = true; };
  process.once('SIGINT', stop);
  let exact = 0;
  let cells = 0;
  try {
    for (let t = 0; t < limit && !stopped; t++) {
      const started = Date.now();
      const { frame, truth } = scene.frameAt(t);
      const result = counter.count(frame);
      for (const zone of scene.zones) {
        cells++;
        if (result.zones[zone.id].count === truth[zone.id].count) exact++;
      }
      if (t % Math.max(1, Math.round(scene.frameRate)) === 0 || t === limit - 1) {
        const clock = new Date(t / scene.frameRate * 1000).toISOString().slice(11, 19);
        const parts = scene.zones.map((z) => {
          const got = result.zones[z.id];
          const want = truth[z.id];
          return z.kind === 'shelf'
            ? `${z.id} ${(got.fill * 100).toFixed(0)}% (true ${((want.fill ?? 0) * 100).toFixed(0)}%)`
            : `${z.id} ${got.count} (true ${want.count})`;
        });
        const line = `${clock}  ${parts.join('   ')}   exact so far ${(100 * exact / cells).toFixed(0)} %`;
        io.out.write(interactive ? `\r\x1b[K${line}` : `${line}\n`);
      }
      const wait = interval - (Date.now() - started);
      if (wait > 0) await sleep(wait);
    }
  } finally {
    process.off('SIGINT', stop);
  }
  if (interactive) io.out.write('\n');
  return 0;
}
