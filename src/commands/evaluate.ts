import { readdir, readFile, stat } from 'node:fs/promises';
import { join, extname, basename } from 'node:path';
import sharp from 'sharp';
import { addConfusion, CdnetLabel, cdnetMetrics, type CdnetMetrics, type Confusion } from '../counting/cdnetMetrics.ts';
import { createCounter, wholeFrameZone } from '../counting/createCounter.ts';
import { createMog2Counter } from '../counting/createMog2Counter.ts';
import { createSequenceCounter, sceneMismatchWarning, type SequenceCounter } from '../counting/createSequenceCounter.ts';
import { findPersonSize } from '../counting/findPersonSize.ts';
import { createBlobFollower } from '../counting/followBlobs.ts';
import { calibratedTally, describeCalibration, fitZoneCalibrations, regressionsInUse, zoneCountFeatures } from '../counting/calibratedTally.ts';
import type { CalibrationPoint, CountFeatures, CountRegressionFit } from '../counting/fitCountRegression.ts';
import type { PreparedZone } from '../vision/prepareZones.ts';
import type { FrameTally } from '../vision/tallyZones.ts';
import { isSnapshots, personSizeReport } from './count.ts';
import { parseCountTruth, readCalibration, type CountTruth } from './countsFile.ts';
import { loadModel, ModelFileError } from '../counting/modelFile.ts';
import { parseZones } from '../counting/parseZones.ts';
import type { Zone } from '../domain/zone.ts';
import type { ColourFrame, ColourFrameItem } from '../domain/colourFrame.ts';
import type { FrameItem, GreyFrame, Mask } from '../domain/frame.ts';
import type { ChromaticityModel } from '../vision/chromaticityModel.ts';
import type { Subspace } from '../vision/subspace.ts';
import { loadOpenCv } from '../vision/loadOpenCv.ts';
import { numberOption, parseOptions, requireOption, UsageError } from './args.ts';
import { frameInput } from './frameInput.ts';

export const evaluateUsage = `residuum evaluate --model <model file> --frames <folder|video|synthetic:scene> --truth <file|folder>
                   [--zones <zones file>] [--method subspace|mog2|both] [--colour] [--json]
                   [--fps N] [--each] [--worst N] [--calibration <counts file>]

Compares counts (and foreground masks) with ground truth, and lists the frames counted worst.
Frames are counted as residuum count counts them: as a sequence in time, with the person size
found in the frames for room zones that give none (both methods get the same zones and the same
following of blobs from frame to frame).
  --truth   a JSON file of per-frame, per-zone counts: {"frames": {"<frame>": {"<zone>": 2, …}, …}}
            (or the JSON lines that residuum count --json prints), or a folder of ground-truth
            masks named like the frames (CDnet labels: 255 foreground, 0 and 50 background,
            85 and 170 not scored; or plain 0/1, 0/255 masks)
  --method  subspace (default), mog2 (opencv.js BackgroundSubtractorMOG2 over the frames in
            order, through the same blob and zone stages), or both side by side
  --colour  in colour: the subspace method discounts cast shadows (a model learned with
            --colour), MOG2 gets colour frames for its own shadow detection; a folder of images
            or synthetic:shadow-room
  --json    one JSON object instead of a table
  --fps     frames per second of the sequence (default 10)
  --each    count each frame on its own: no following, no drift (images not in time order)
  --worst   how many of the worst frames to list per method (default 5)
  --calibration  people counted by hand in a few frames (the format of --truth): each method
            fits per room zone a regression of the count on what the zone's foreground looks like
            and uses it where it beats counting by blob sizes; those frames are not scored`;

/** Count errors of one zone. */
export interface ZoneScore {
  frames: number;
  /** Mean absolute error of the count. */
  mae: number;
  /** Share of frames with the exact count. */
  exact: number;
  /** Mean of (counted − true). */
  bias: number;
}

/** A frame among those counted worst: its name and the sum over zones of |counted − true|. */
export interface WorstFrame {
  readonly frame: string;
  readonly error: number;
  /** Per zone: counted and true. */
  readonly zones: Record<string, { counted: number; truth: number }>;
}

/**
 * A detector to evaluate: the subspace method or the MOG2 baseline, in grey or in colour (the
 * subspace with shadow suppression, MOG2 on colour frames with its own shadow detection).
 */
export type EvaluateMethod = 'subspace' | 'mog2' | 'subspace-colour' | 'mog2-colour';

export interface MethodReport {
  readonly method: EvaluateMethod;
  readonly zones: Record<string, ZoneScore>;
  /** The frames with the largest count error, worst first (frames with count truth only). */
  readonly worst: readonly WorstFrame[];
  /** Set when the frames do not look like the model's scene (see sceneMismatchWarning). */
  readonly warning?: string;
  /**
   * With calibration counts: what each zone's fit came to (its frames are left out of the
   * scores, which are those of the calibrated counts where a zone's regression is used).
   */
  readonly calibration?: Record<string, Omit<CountRegressionFit, 'regression'>>;
  /**
   * CDnet metrics over all scored mask pixels (mask truth only), and `shadowFpr`: the share of
   * the pixels labelled shadow (CDnet 50) detected as foreground (NaN when none is labelled).
   */
  readonly masks?: CdnetMetrics & { frames: number; shadowFpr: number };
}

export interface EvaluateOptions {
  /** The empty scene's colour statistics, needed by 'subspace-colour'. */
  colour?: ChromaticityModel;
  /**
   * Count the frames as a sequence in time (default true): the subspace method follows slow
   * drift (createSequenceCounter), and both methods follow blobs from frame to frame. false
   * counts each frame on its own.
   */
  sequence?: boolean;
  /** Frames per second of the sequence; default 10. */
  framesPerSecond?: number;
  /** Worst frames listed per method (whole number ≥ 0); default 5. */
  worst?: number;
  /**
   * People counted by hand in a few frames, per room zone: each method fits its zone count
   * regressions on them (fitCountRegression) and uses those that beat its blob rule; these frames
   * are not scored.
   */
  calibration?: CountTruth;
}

/** `residuum evaluate`. */
export async function evaluateCommand(argv: string[], io = { out: process.stdout, err: process.stderr }): Promise<number> {
  const v = parseOptions(argv, {
    model: { type: 'string' },
    frames: { type: 'string' },
    truth: { type: 'string' },
    zones: { type: 'string' },
    method: { type: 'string' },
    colour: { type: 'boolean' },
    json: { type: 'boolean' },
    fps: { type: 'string' },
    each: { type: 'boolean' },
    worst: { type: 'string' },
    calibration: { type: 'string' },
  });
  const modelFile = requireOption(v.model, 'model', 'the model file from residuum learn');
  const framesPerSecond = numberOption(v.fps, 'fps', { min: 0.01, max: 1000 });
  const worst = numberOption(v.worst, 'worst', { min: 0, max: 1000, integer: true });
  const frames = requireOption(v.frames, 'frames', 'the frames to evaluate on');
  const truthPath = requireOption(v.truth, 'truth', 'a JSON file of counts or a folder of masks');
  const method = v.method ?? 'subspace';
  if (!['subspace', 'mog2', 'both'].includes(method)) throw new UsageError(`--method must be subspace, mog2 or both, got "${method}"`);
  const { model, colour } = await loadModel(modelFile);
  if (v.colour && colour === undefined && method !== 'mog2') {
    throw new ModelFileError(`${modelFile}: learned without colour statistics; learn it again with --colour`);
  }
  const givenZones: Zone[] = v.zones ? parseZones(await readFile(v.zones, 'utf8'), v.zones) : [wholeFrameZone];
  const truthIsFolder = (await stat(truthPath).catch(() => {
    throw new UsageError(`--truth: ${truthPath}: no such file or folder`);
  })).isDirectory();
  const counts = truthIsFolder ? undefined : parseCountTruth(await readFile(truthPath, 'utf8'), truthPath);
  const masks = truthIsFolder ? await maskIndex(truthPath) : undefined;

  const chosen = method === 'both' ? (['subspace', 'mog2'] as const) : ([method] as ['subspace' | 'mog2']);
  const methods: EvaluateMethod[] = v.colour ? chosen.map((m) => `${m}-colour` as const) : [...chosen];
  const size = { width: model.width, height: model.height };
  const open = () => (v.colour ? frameInput(frames, { ...size, colour: true }) : frameInput(frames, size));
  const found = await findPersonSize(model, givenZones, open());
  for (const line of personSizeReport(found)) io.err.write(`${line}\n`);
  const each = v.each === true || isSnapshots(found.continuity);
  if (each && !v.each) io.err.write(`the frames look like separate pictures, not a sequence in time: each is counted on its own\n`);
  const calibration = v.calibration === undefined ? undefined : await readCalibration(v.calibration, found.zones);
  const options: EvaluateOptions = { colour, sequence: !each, ...(framesPerSecond !== undefined && { framesPerSecond }), ...(worst !== undefined && { worst }), ...(calibration && { calibration }) };
  const reports = await evaluate(model, open(), found.zones, methods, { counts, masks }, options);
  for (const report of reports) if (report.warning) io.err.write(`warning (${report.method}): ${report.warning}\n`);
  if (v.json) {
    io.out.write(JSON.stringify({ frames, truth: truthPath, methods: reports }) + '\n');
  } else {
    io.out.write(formatReports(reports));
  }
  return 0;
}

/**
 * Runs the methods over the frames in order and scores them against the truth. Frames without
 * truth are counted (MOG2 needs every frame to keep its model) but not scored. The colour
 * methods need items with colour frames (ColourFrameItem); 'subspace-colour' also needs
 * `options.colour`.
 */
export async function evaluate(
  model: Subspace,
  items: AsyncIterable<FrameItem | ColourFrameItem>,
  zones: readonly Zone[],
  methods: readonly EvaluateMethod[],
  truth: { counts?: CountTruth; masks?: Map<string, string> },
  options: EvaluateOptions = {},
): Promise<MethodReport[]> {
  const { colour, sequence = true, framesPerSecond = 10, worst: worstCount = 5, calibration } = options;
  const size = { width: model.width, height: model.height };
  if (methods.includes('subspace-colour') && colour === undefined) throw new RangeError("method 'subspace-colour' needs the colour statistics (options.colour)");
  const cv = methods.includes('mog2') || methods.includes('mog2-colour') ? await loadOpenCv() : undefined;
  type Count = (f: GreyFrame, c: ColourFrame | undefined) => FrameTally;
  type Runner = { method: EvaluateMethod; count: Count; mask: () => Mask; zones: readonly PreparedZone[]; close: () => void; sequence?: SequenceCounter };
  /** The subspace method, as a sequence or frame by frame. */
  const subspace = (m: EvaluateMethod, colourModel?: ChromaticityModel): Runner => {
    const counterOptions = colourModel === undefined ? {} : { colourModel };
    if (sequence) {
      const counter = createSequenceCounter(model, zones, { ...counterOptions, framesPerSecond });
      return { method: m, count: (f, c) => counter.count(f, c), mask: () => counter.lastMask(), zones: counter.zones, close: () => {}, sequence: counter };
    }
    const counter = createCounter(model, zones, counterOptions);
    return { method: m, count: (f, c) => counter.count(f, c), mask: () => counter.lastMask(), zones: counter.zones, close: () => {} };
  };
  /** The MOG2 baseline, through the same blob stages and, in a sequence, the same following of blobs. */
  const mog2 = (m: EvaluateMethod, inColour: boolean): Runner => {
    const counter = createMog2Counter(cv, size, zones, { colour: inColour });
    const follower = sequence ? createBlobFollower(counter.zones, size) : undefined;
    const count: Count = (f, c) => {
      const plain = counter.count(f, inColour ? c! : undefined);
      return follower === undefined ? plain : follower.tally(plain.blobs, plain);
    };
    return { method: m, count, mask: () => counter.lastMask(), zones: counter.zones, close: () => counter.close() };
  };
  const runners = methods.map((m): Runner => {
    switch (m) {
      case 'subspace':
        return subspace(m);
      case 'subspace-colour':
        return subspace(m, colour!);
      case 'mog2':
        return mog2(m, false);
      case 'mog2-colour':
        return mog2(m, true);
      default:
        throw new RangeError(`method must be subspace, mog2, subspace-colour or mog2-colour, got ${JSON.stringify(m)}`);
    }
  });
  const needsColour = methods.some((m) => m.endsWith('-colour'));
  /** Frames with count truth: each method's tally (and features, when calibrating), scored at the end. */
  type Counted = { frame: string; want: Record<string, number>; tally: FrameTally; features?: Map<string, CountFeatures> };
  const counted = runners.map((): Counted[] => []);
  const points = runners.map(() => new Map<string, CalibrationPoint[]>());
  const confusions = runners.map((): Confusion => ({ tp: 0, fp: 0, tn: 0, fn: 0 }));
  const shadowHits = runners.map(() => 0);
  let shadowPixels = 0;
  let maskFrames = 0;
  try {
    for await (const item of items) {
      if (item.error) continue;
      const itemColour = (item as ColourFrameItem).colour;
      if (needsColour && itemColour === undefined) throw new RangeError(`frame ${item.name} has no colour frame, which the colour methods need`);
      const wantCounts = truth.counts?.get(item.name) ?? truth.counts?.get(basename(item.name, extname(item.name)));
      const given = calibration?.get(item.name) ?? calibration?.get(basename(item.name, extname(item.name)));
      const maskFile = truth.masks?.get(basename(item.name, extname(item.name)));
      const wantMask = maskFile ? await readTruthMask(maskFile, size) : undefined;
      if (wantMask) {
        maskFrames++;
        for (let i = 0; i < wantMask.length; i++) if (wantMask[i] === CdnetLabel.shadow) shadowPixels++;
      }
      runners.forEach((runner, r) => {
        const result = runner.count(item.frame, itemColour);
        const features = calibration !== undefined && (wantCounts || given) ? zoneCountFeatures(result, runner.mask(), runner.zones) : undefined;
        if (given !== undefined) {
          for (const [zone, count] of Object.entries(given)) {
            const f = features!.get(zone);
            if (f === undefined) continue;
            const list = points[r].get(zone) ?? [];
            list.push({ features: f, count });
            points[r].set(zone, list);
          }
        } else if (wantCounts) {
          counted[r].push({ frame: item.name, want: wantCounts, tally: { total: result.total, zones: result.zones }, ...(features && { features }) });
        }
        if (wantMask) {
          const detected = runner.mask().data;
          addConfusion(detected, wantMask, confusions[r]);
          for (let i = 0; i < wantMask.length; i++) if (wantMask[i] === CdnetLabel.shadow && detected[i] !== 0) shadowHits[r]++;
        }
      });
    }
  } finally {
    for (const runner of runners) runner.close();
  }
  return runners.map((runner, r) => {
    const fits = calibration === undefined ? undefined : fitZoneCalibrations(points[r]);
    const regressions = fits === undefined ? new Map() : regressionsInUse(fits);
    const scores = new Map<string, { n: number; abs: number; exact: number; bias: number }>();
    const worst: WorstFrame[] = [];
    for (const frame of counted[r]) {
      const tally = frame.features === undefined ? frame.tally : calibratedTally(frame.tally, frame.features, regressions);
      let error = 0;
      const compared: WorstFrame['zones'] = {};
      for (const [zone, want] of Object.entries(frame.want)) {
        const got = tally.zones[zone];
        if (!got) continue;
        const s = scores.get(zone) ?? { n: 0, abs: 0, exact: 0, bias: 0 };
        s.n++;
        s.abs += Math.abs(got.count - want);
        s.exact += got.count === want ? 1 : 0;
        s.bias += got.count - want;
        scores.set(zone, s);
        error += Math.abs(got.count - want);
        compared[zone] = { counted: got.count, truth: want };
      }
      keepWorst(worst, { frame: frame.frame, error, zones: compared }, worstCount);
    }
    const zonesOut: Record<string, ZoneScore> = {};
    for (const [zone, s] of scores) zonesOut[zone] = { frames: s.n, mae: s.abs / s.n, exact: s.exact / s.n, bias: s.bias / s.n };
    const warning = runner.sequence === undefined ? undefined : sceneMismatchWarning(runner.sequence.summary());
    return {
      method: runner.method,
      zones: zonesOut,
      worst,
      ...(fits !== undefined && { calibration: Object.fromEntries([...fits].map(([zone, { regression: _, ...fit }]) => [zone, fit])) }),
      ...(warning !== undefined && { warning }),
      ...(maskFrames > 0 && {
        masks: { ...cdnetMetrics(confusions[r]), frames: maskFrames, shadowFpr: shadowPixels > 0 ? shadowHits[r] / shadowPixels : Number.NaN },
      }),
    };
  });
}

/** Keeps the `limit` frames with the largest error in `list`, worst first (the earlier frame first among equals). */
function keepWorst(list: WorstFrame[], frame: WorstFrame, limit: number): void {
  if (limit === 0 || frame.error === 0) return;
  if (list.length === limit && list[limit - 1].error >= frame.error) return;
  let at = list.length;
  while (at > 0 && list[at - 1].error < frame.error) at--;
  list.splice(at, 0, frame);
  if (list.length > limit) list.pop();
}


async function maskIndex(folder: string): Promise<Map<string, string>> {
  const index = new Map<string, string>();
  for (const name of await readdir(folder)) {
    if (/\.(png|bmp|jpe?g|webp|tiff?)$/i.test(name)) index.set(basename(name, extname(name)).replace(/^gt/, ''), join(folder, name));
  }
  return index;
}

/** A truth mask at the model size, nearest-neighbour so labels stay labels. */
async function readTruthMask(file: string, size: { width: number; height: number }): Promise<Uint8Array> {
  const { data } = await sharp(file).greyscale().resize(size.width, size.height, { fit: 'fill', kernel: 'nearest' }).raw().toBuffer({ resolveWithObject: true });
  return new Uint8Array(data);
}

function formatReports(reports: readonly MethodReport[]): string {
  const lines: string[] = [];
  const zones = [...new Set(reports.flatMap((r) => Object.keys(r.zones)))];
  const wide = Math.max(14, ...reports.map((r) => r.method.length + 4)); // room for "<method> MAE"
  const header = ['zone'.padEnd(16), ...reports.flatMap((r) => [`${r.method} MAE`.padStart(wide), 'exact'.padStart(7), 'bias'.padStart(7)])];
  lines.push(header.join(' '));
  for (const zone of zones) {
    const cells = reports.flatMap((r) => {
      const s = r.zones[zone];
      return s ? [s.mae.toFixed(3).padStart(wide), `${(s.exact * 100).toFixed(0)}%`.padStart(7), s.bias.toFixed(2).padStart(7)] : ['–'.padStart(wide), '', ''];
    });
    lines.push([zone.padEnd(16), ...cells].join(' '));
  }
  if (reports.some((r) => r.masks)) {
    lines.push('');
    const column = Math.max(10, ...reports.map((r) => r.method.length));
    lines.push(['masks (CDnet)'.padEnd(16), ...reports.map((r) => r.method.padStart(column))].join(' '));
    for (const key of ['recall', 'specificity', 'fpr', 'fnr', 'pwc', 'precision', 'fMeasure', 'shadowFpr'] as const) {
      lines.push([key.padEnd(16), ...reports.map((r) => (r.masks ? r.masks[key].toFixed(4) : '–').padStart(column))].join(' '));
    }
  }
  for (const report of reports) {
    if (report.calibration === undefined) continue;
    lines.push('', `calibration (${report.method}):`);
    for (const [zone, fit] of Object.entries(report.calibration)) lines.push(`  ${describeCalibration(zone, fit)}`);
  }
  for (const report of reports) {
    if (report.worst.length === 0) continue;
    lines.push('', `worst frames (${report.method}): counted / true per zone`);
    for (const w of report.worst) {
      const cells = Object.entries(w.zones).filter(([, z]) => z.counted !== z.truth).map(([zone, z]) => `${zone} ${z.counted}/${z.truth}`);
      lines.push(`  ${w.frame.padEnd(14)} off by ${w.error}: ${cells.join(', ')}`);
    }
  }
  return lines.join('\n') + '\n';
}
