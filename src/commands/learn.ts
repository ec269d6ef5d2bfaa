import type { GreyFrame } from '../frames/frame.ts';
import { saveModel } from '../counting/modelFile.ts';
import { modelVerdict } from '../counting/modelVerdict.ts';
import { distinctFrames } from '../vision/distinctFrames.ts';
import { fitSubspace } from '../vision/fitSubspace.ts';
import { numberOption, parseOptions, requireOption, UsageError } from './args.ts';
import { frameInput } from './frameInput.ts';
import { progressLine } from './progressLine.ts';

export const learnUsage = `residuum learn --frames <folder|video|synthetic:scene:empty> --out <model file>
                [--width W] [--components K | --variance V] [--max-components N]
                [--every N] [--limit N]

Learns the empty scene: a mean image and a few eigen-images from frames with nobody in them.
  --frames          a folder of images (JPEG, PNG, WebP, …), a video file ffmpeg reads, or
                    synthetic:<scene>:empty
  --out             the model file to write
  --width           working width in pixels (default: long side 320, aspect kept)
  --components      number of eigen-images to keep (default: by --variance)
  --variance        share of the variation to keep, 0 < V ≤ 1 (default 0.95)
  --max-components  upper bound when choosing by variance (default 12)
  --every           use one frame in N (default 1)
  --limit           use at most N frames (default 500)`;

/** `residuum learn`: reads empty-scene frames, fits the subspace, writes the model file. */
export async function learnCommand(argv: string[], io = { out: process.stdout, err: process.stderr }): Promise<number> {
  const v = parseOptions(argv, {
    frames: { type: 'string' },
    out: { type: 'string' },
    width: { type: 'string' },
    components: { type: 'string' },
    variance: { type: 'string' },
    'max-components': { type: 'string' },
    every: { type: 'string' },
    limit: { type: 'string' },
  });
  const frames = requireOption(v.frames, 'frames', 'the folder, video or scene to learn from');
  const out = requireOption(v.out, 'out', 'the model file to write');
  const width = numberOption(v.width, 'width', { min: 16, max: 4096, integer: true });
  const components = numberOption(v.components, 'components', { min: 0, max: 64, integer: true });
  const variance = numberOption(v.variance, 'variance', { min: Number.MIN_VALUE, max: 1 });
  if (components !== undefined && variance !== undefined) throw new UsageError('give --components or --variance, not both');
  const maxComponents = numberOption(v['max-components'], 'max-components', { min: 0, max: 64, integer: true });
  const every = numberOption(v.every, 'every', { min: 1, integer: true }) ?? 1;
  const limit = numberOption(v.limit, 'limit', { min: 2, integer: true }) ?? 500;

  const progress = progressLine(io.err, 'reading frames', limit);
  const data: Float32Array[] = [];
  let size: GreyFrame | undefined;
  let skipped = 0;
  for await (const item of frameInput(frames, { width, every, limit })) {
    if (item.error) {
      skipped++;
      progress.note(`skipped ${item.error.message}`);
      continue;
    }
    size ??= item.frame;
    data.push(item.frame.data);
    progress.update(data.length + skipped);
  }
  progress.done();
  if (!size || data.length < 2) {
    io.err.write(`residuum learn: ${data.length} usable frame${data.length === 1 ? '' : 's'} in ${frames}; at least 2 are needed (50 or more recommended)\n`);
    return 1;
  }
  io.err.write(progress.interactive ? 'fitting the subspace…\n' : '');
  const distinct = distinctFrames(data);
  const repeated = data.length - distinct.length;
  if (distinct.length < 2) {
    io.err.write(`residuum learn: all ${data.length} frames of ${frames} are the same picture; at least 2 different ones are needed\n`);
    return 1;
  }
  const model = fitSubspace(distinct, size, { components, variance, maxComponents });
  await saveModel(out, model, {
    learnedAt: new Date().toISOString(),
    source: frames,
    settings: { components, variance: variance ?? 0.95, maxComponents: maxComponents ?? 12, every, limit },
  });
  const verdict = modelVerdict(model);
  const rows: [string, string][] = [
    ['frames used', `${model.frameCount}${[repeated && `${repeated} repeated dropped`, skipped && `${skipped} unreadable skipped`].filter(Boolean).join(', ').replace(/^(.+)$/, ' ($1)')}`],
    ['working size', `${model.width}×${model.height}`],
    ['components kept', String(model.components)],
    ['variance retained', `${(model.retainedVariance * 100).toFixed(1)} %`],
    ['residual noise', `${verdict.medianNoise.toFixed(2)} grey levels (median per pixel; 95th percentile ${verdict.noiseP95.toFixed(2)})`],
    ['verdict', `${verdict.level}: ${verdict.findings[0]}`],
    ...verdict.findings.slice(1).map((f): [string, string] => ['', f]),
    ['model written to', out],
  ];
  for (const [label, value] of rows) io.out.write(`${label.padEnd(18)}  ${value}\n`);
  return 0;
}
