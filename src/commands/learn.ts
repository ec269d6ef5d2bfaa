import type { ColourFrame } from '../domain/colourFrame.ts';
import type { GreyFrame } from '../domain/frame.ts';
import { fitChromaticity } from '../vision/fitChromaticity.ts';
import { statSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { loadConfig } from '../config/loadConfig.ts';
import { saveModel } from '../counting/modelFile.ts';
import { learningOutcome, storeModel, type LearningOutcome } from '../counting/storeModel.ts';
import { createCameraSource } from '../frames/live/createCameraSource.ts';
import { openStore } from '../store/index.ts';
import type { SubspaceFit } from '../vision/fitSubspace.ts';
import { modelVerdict } from '../counting/modelVerdict.ts';
import { distinctFrames } from '../vision/distinctFrames.ts';
import { fitSubspace } from '../vision/fitSubspace.ts';
import { numberOption, parseOptions, requireOption, UsageError } from './args.ts';
import { frameInput } from './frameInput.ts';
import { progressLine } from './progressLine.ts';
import { random } from '../frames/synthetic/random.ts';
import { MAX_KERNEL_COMPONENTS } from '../vision/countingKernels.ts';

export const learnUsage = `residuum learn --frames <folder|video|synthetic:scene:empty> --out <model file>
                [--width W] [--components K | --variance V] [--max-components N]
                [--every N] [--limit N] [--read N] [--plain] [--colour]
       residuum learn --config <file> --camera <id> --seconds N [--data <folder>] [--out <model file>]

Learns the empty scene: a mean image and a few eigen-images. The frames may show people
passing through: they are set aside while learning (robust PCA), so that only the empty scene
is kept; the report says how much was set aside, and the verdict is "poor" when too much moved.
  --frames          a folder of images (JPEG, PNG, WebP, …), a video file ffmpeg reads, or
                    synthetic:<scene> (synthetic:<scene>:empty for the scene without people)
  --out             the model file to write
  --width           working width in pixels (default: long side 320, aspect kept)
  --components      number of eigen-images to keep, at most 24 (default: by --variance)
  --variance        share of the variation to keep, 0 < V ≤ 1 (default 0.95)
  --max-components  upper bound when choosing by variance, at most 24 (default 12)
  --every           use one frame in N (default 1)
  --limit           use at most N frames (default 500), chosen evenly at random over all the
                    frames read, so that learning sees the whole recording
  --read            read at most N frames of the source (default: all of a folder or video;
                    600 of a synthetic scene)
  --plain           plain PCA for frames known to be empty (faster; anyone passing through would
                    be learned into the empty scene). --robust, the default, is still accepted
  --colour          also learn the empty scene's colour statistics, for count/evaluate --colour
                    (shadow suppression); folders of images and synthetic:shadow-room:empty only
  --config, --camera, --seconds
                    learn from the configured camera's live source for N seconds (the view must be
                    empty meanwhile); the model is stored in <data>/residuum.db (default ./data),
                    where residuum run picks it up, and written to --out if given`;

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
    read: { type: 'string' },
    robust: { type: 'boolean' },
    plain: { type: 'boolean' },
    colour: { type: 'boolean' },
    config: { type: 'string' },
    camera: { type: 'string' },
    seconds: { type: 'string' },
    data: { type: 'string' },
  });
  // Before minutes of learning: a model that cannot be written is refused now, in words.
  if (typeof v.out === 'string') checkOutFolder(v.out);
  if (v.config !== undefined) {
    if (v.colour) throw new UsageError('--colour does not go with --config yet: learn in colour from a folder of images');
    return learnFromCamera(v, io);
  }
  const frames = requireOption(v.frames, 'frames', 'the folder, video or scene to learn from');
  const out = requireOption(v.out, 'out', 'the model file to write');
  const width = numberOption(v.width, 'width', { min: 16, max: 4096, integer: true });
  const components = numberOption(v.components, 'components', { min: 0, max: MAX_KERNEL_COMPONENTS, integer: true });
  const variance = numberOption(v.variance, 'variance', { min: Number.MIN_VALUE, max: 1 });
  if (components !== undefined && variance !== undefined) throw new UsageError('give --components or --variance, not both');
  const maxComponents = numberOption(v['max-components'], 'max-components', { min: 0, max: MAX_KERNEL_COMPONENTS, integer: true });
  const every = numberOption(v.every, 'every', { min: 1, integer: true }) ?? 1;
  const limit = numberOption(v.limit, 'limit', { min: 2, integer: true }) ?? 500;
  const read = numberOption(v.read, 'read', { min: 2, integer: true });

  const progress = progressLine(io.err, 'reading frames', read);
  let size: GreyFrame | undefined;
  let skipped = 0;
  const source = { width, every, ...(read !== undefined && { limit: read }) };
  const items = v.colour ? frameInput(frames, { ...source, colour: true }) : frameInput(frames, source);
  // A uniform sample of `limit` of all the frames read, in their order: learning then sees the
  // whole recording (people who stood still for a while in one part of it do not dominate), in
  // bounded memory (reservoir sampling, Vitter 1985, Algorithm R; seeded, so runs repeat).
  const draws = random(1);
  const sample: { index: number; grey: Float32Array; colour?: Uint8Array }[] = [];
  let seen = 0;
  for await (const item of items) {
    if (item.error) {
      skipped++;
      progress.note(`skipped ${item.error.message}`);
      continue;
    }
    size ??= item.frame;
    const colour = (item as { colour?: ColourFrame }).colour;
    const entry = { index: seen, grey: item.frame.data, ...(colour && { colour: colour.data }) };
    if (sample.length < limit) sample.push(entry);
    else {
      const j = Math.floor(draws.uniform() * (seen + 1));
      if (j < limit) sample[j] = entry;
    }
    seen++;
    progress.update(seen + skipped);
  }
  progress.done();
  sample.sort((a, b) => a.index - b.index);
  const data = sample.map((k) => k.grey);
  const colours = sample.flatMap((k) => (k.colour ? [k.colour] : []));
  if (!size || data.length < 2) {
    io.err.write(`residuum learn: ${data.length} usable frame${data.length === 1 ? '' : 's'} in ${frames}; at least 2 are needed (50 or more recommended)\n`);
    return 1;
  }
  io.err.write(progress.interactive ? 'fitting the subspace…\n' : '');
  const distinct = distinctFrames(data);
  const repeated = data.length - distinct.length;
  // The colour statistics from the same pictures as the subspace (repeats dropped alike).
  const kept = new Set(distinct);
  const distinctColours = v.colour ? colours.filter((_, t) => kept.has(data[t])) : [];
  if (distinct.length < 2) {
    io.err.write(`residuum learn: all ${data.length} frames of ${frames} are the same picture; at least 2 different ones are needed\n`);
    return 1;
  }
  if (v.plain && v.robust) throw new UsageError('give --plain or --robust, not both');
  const robust = v.plain !== true;
  const model = fitSubspace(distinct, size, { components, variance, maxComponents, robustIterations: robust ? 2 : 0 });
  const colour = v.colour ? fitChromaticity(distinctColours, size, { robust }) : undefined;
  await writeModel(out, model, {
    learnedAt: new Date().toISOString(),
    source: frames,
    settings: { components, variance: variance ?? 0.95, maxComponents: maxComponents ?? 12, every, limit, ...(v.colour && { colour: true }) },
  }, colour);
  printReport(io.out, model, repeated, skipped, out, colour === undefined ? undefined : medianOf(colour.chromaSpread));
  return 0;
}

/** The median of per-pixel values (the colour line of the report). */
function medianOf(values: Float32Array): number {
  const sorted = Float32Array.from(values).sort();
  return sorted[sorted.length >> 1];
}

/** The learning report: frames, components, variance, noise, verdict; the colour spread when learned in colour. */
/** Refuses an --out whose folder is missing or is no folder, naming the option and the folder. */
export function checkOutFolder(out: string): void {
  const folder = dirname(resolve(out));
  let isFolder: boolean;
  try {
    isFolder = statSync(folder).isDirectory();
  } catch {
    throw new RangeError(`--out: the folder ${folder} does not exist; create it first or write the model elsewhere`);
  }
  if (!isFolder) throw new RangeError(`--out: ${folder} is not a folder`);
}

/** saveModel with a failure in words (no permission, disk full) naming --out, not a stack trace. */
async function writeModel(...args: Parameters<typeof saveModel>): Promise<void> {
  try {
    await saveModel(...args);
  } catch (error) {
    const e = error as NodeJS.ErrnoException;
    if (typeof e.code !== 'string') throw error;
    const why = e.code === 'EACCES' || e.code === 'EPERM' ? 'no permission to write there' : e.code === 'ENOSPC' ? 'the disk is full' : e.code === 'ENOENT' ? 'its folder does not exist' : e.code;
    throw new RangeError(`--out: cannot write the model to ${args[0]} (${why})`);
  }
}

function printReport(out: NodeJS.WritableStream, model: SubspaceFit, repeated: number, skipped: number, writtenTo: string, colourSpread?: number): void {
  const verdict = modelVerdict(model);
  const rows: [string, string][] = [
    ['frames used', `${model.frameCount}${[repeated && `${repeated} repeated dropped`, skipped && `${skipped} unreadable skipped`].filter(Boolean).join(', ').replace(/^(.+)$/, ' ($1)')}`],
    ['working size', `${model.width}×${model.height}`],
    ['components kept', String(model.components)],
    ...(model.rejectedShare > 0 ? [['set aside', `${(model.rejectedShare * 100).toFixed(1)} % of learning pixels (people or motion), in ${(model.busyFrameShare * 100).toFixed(0)} % of the frames`] as [string, string]] : []),
    ['variance retained', `${(model.retainedVariance * 100).toFixed(1)} %`],
    ['residual noise', `${verdict.medianNoise.toFixed(2)} grey levels (median per pixel; 95th percentile ${verdict.noiseP95.toFixed(2)})`],
    ['verdict', `${verdict.level}: ${verdict.findings[0]}`],
    ...verdict.findings.slice(1).map((f): [string, string] => ['', f]),
    ...(colourSpread === undefined ? [] : [['colour', `learned for shadow suppression (median chromaticity spread ${colourSpread.toFixed(2)} σ)`] as [string, string]]),
    ['model written to', writtenTo],
  ];
  for (const [label, value] of rows) out.write(`${label.padEnd(18)}  ${value}\n`);
}

/** `learn --config --camera --seconds`: frames from the camera's live source for N seconds. */
async function learnFromCamera(
  v: Record<string, string | boolean | undefined>,
  io: { out: NodeJS.WritableStream; err: NodeJS.WritableStream & { isTTY?: boolean } },
): Promise<number> {
  for (const only of ['frames', 'width', 'every', 'limit', 'read']) {
    if (v[only] !== undefined) throw new UsageError(`--${only} does not go with --config: the camera's configuration sets the source and size`);
  }
  const config = loadConfig(v.config as string);
  const id = requireOption(v.camera as string | undefined, 'camera', `the camera id (one of ${config.cameras.map((c) => c.id).join(', ')})`);
  const camera = config.cameras.find((c) => c.id === id);
  if (!camera) throw new UsageError(`--camera: no camera "${id}" in ${config.file} (known: ${config.cameras.map((c) => c.id).join(', ')})`);
  const seconds = numberOption(v.seconds as string | undefined, 'seconds', { min: 1, max: 3600 }) ?? camera.learnSeconds;
  const components = numberOption(v.components as string | undefined, 'components', { min: 0, max: MAX_KERNEL_COMPONENTS, integer: true });
  const variance = numberOption(v.variance as string | undefined, 'variance', { min: Number.MIN_VALUE, max: 1 });
  const maxComponents = numberOption(v['max-components'] as string | undefined, 'max-components', { min: 0, max: MAX_KERNEL_COMPONENTS, integer: true });

  const frames: Float32Array[] = [];
  const progress = progressLine(io.err, `learning from ${id}`, Math.round(seconds));
  const source = createCameraSource(camera.source);
  let started: number | undefined;
  let lastState = '';
  await new Promise<void>((done) => {
    const timer = setTimeout(done, (seconds + 120) * 1000); // give up when no frames come at all
    source.start({
      frame(frame, at) {
        started ??= at;
        frames.push(Float32Array.from(frame.data));
        progress.update(Math.round((at - started) / 1000));
        if (at - started >= seconds * 1000) {
          clearTimeout(timer);
          done();
        }
      },
      status(state, detail) {
        if (state !== lastState) progress.note(`${id}: ${state}${detail.reason ? ` (${detail.reason})` : ''}`);
        lastState = state;
      },
      badFrame(error) {
        progress.note(`skipped ${error.message}`);
      },
    });
  });
  await source.stop();
  progress.done();
  const distinct = distinctFrames(frames);
  if (distinct.length < 2) {
    io.err.write(`residuum learn: got ${frames.length} frame${frames.length === 1 ? '' : 's'} (${distinct.length} distinct) from ${id}; at least 2 are needed\n`);
    return 1;
  }
  const model = fitSubspace(distinct, camera.source.size, { components, variance, maxComponents, robustIterations: v.plain ? 0 : 2 });
  const info = { learnedAt: new Date().toISOString(), source: `camera ${id}`, settings: { seconds, components, variance, maxComponents } };
  const store = openStore(join(resolve((v.data as string | undefined) ?? 'data'), 'residuum.db'), { timeZone: config.site.timeZone });
  // Judged before it is put to use: a poor model is kept as rejected while the camera has one.
  const { level, findings } = modelVerdict(model);
  let outcome: LearningOutcome;
  try {
    store.upsertCamera({ id, name: camera.name });
    outcome = learningOutcome({ level, findings }, store.activeModelId(id) !== undefined);
    const modelId = storeModel(store, id, model, info.source, { verdict: { level, findings }, activate: outcome.use, rejected: !outcome.use, keep: config.models?.keep ?? 5 });
    store.insertEvent({ camera: id, type: outcome.event, detail: { model: modelId, level, findings, ...(outcome.reason !== undefined && { reason: outcome.reason }), text: outcome.text } });
  } finally {
    store.close();
  }
  if (v.out) await writeModel(v.out as string, model, info);
  printReport(io.out, model, frames.length - distinct.length, 0, v.out ? `${v.out} and the database` : 'the database');
  if (!outcome.use) {
    io.err.write(`residuum learn: ${outcome.text} It is kept in the database as rejected; an admin can still choose it in the dashboard.\n`);
    return 1;
  }
  return 0;
}
