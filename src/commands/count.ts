import { readFile } from 'node:fs/promises';
import { createCounter, wholeFrameZone } from '../counting/createCounter.ts';
import { createSequenceCounter, sceneMismatchWarning } from '../counting/createSequenceCounter.ts';
import { findPersonSize, formatShare, type FoundPersonSize } from '../counting/findPersonSize.ts';
import { loadModel, ModelFileError } from '../counting/modelFile.ts';
import { parseZones } from '../counting/parseZones.ts';
import type { Zone } from '../domain/zone.ts';
import type { FrameCount } from '../counting/createCounter.ts';
import type { ColourFrameItem } from '../domain/colourFrame.ts';
import { calibratedTally, describeCalibration, fitZoneCalibrations, regressionsInUse, zoneCountFeatures } from '../counting/calibratedTally.ts';
import type { CalibrationPoint, CountFeatures } from '../counting/fitCountRegression.ts';
import { basename, extname } from 'node:path';
import { readCalibration } from './countsFile.ts';
import { numberOption, parseOptions, requireOption, UsageError } from './args.ts';
import { frameInput } from './frameInput.ts';

export const countUsage = `residuum count --model <model file> --frames <folder|video|synthetic:scene>
                [--zones <zones file>] [--json] [--threshold T] [--every N] [--limit N] [--colour]
                [--fps N] [--each] [--calibration <counts file>]

Counts people per room zone and fill per shelf zone in each frame. Frames are taken as a
sequence in time (a video, or images named in order): the background follows slow changes of
light, and blobs are followed from frame to frame, so that a flicker of one frame does not count
and people walking together keep their count. Room zones without a person size are given the one
the frames show: people seen alone are measured first (a first pass over the frames), and how
their size changes with distance is fitted and printed.
  --model      a model file from residuum learn
  --frames     a folder of images, a video file ffmpeg reads, or synthetic:<scene>
  --zones      zones file (YAML or JSON; see config/zones.example.yaml); default: one zone "all"
  --json       one JSON object per frame and line instead of a table
  --threshold  foreground threshold in noise units for zones that set none (default 3)
  --every      count one frame in N (default 1)
  --limit      count at most N frames (default: all)
  --colour     discount cast shadows by colour (a model learned with --colour; a folder of images
               or synthetic:shadow-room)
  --fps        frames per second of the sequence, for following slow light changes (default 10)
  --each       count each frame on its own (images not in time order): no following, no drift
  --calibration  people counted by hand in a few of the frames, per room zone (the format of
               evaluate --truth: {"frames": {"<frame>": {"<zone>": 3}}}); each zone with at least
               5 different counts gets a regression of the count on what its foreground looks
               like, used where it beats counting by blob sizes (printed on stderr). The frames are
               then printed after all are counted`;

/** `residuum count`: counts each frame of a source against a learned model. */
export async function countCommand(argv: string[], io = { out: process.stdout, err: process.stderr }): Promise<number> {
  const v = parseOptions(argv, {
    model: { type: 'string' },
    frames: { type: 'string' },
    zones: { type: 'string' },
    json: { type: 'boolean' },
    threshold: { type: 'string' },
    every: { type: 'string' },
    limit: { type: 'string' },
    colour: { type: 'boolean' },
    fps: { type: 'string' },
    each: { type: 'boolean' },
    calibration: { type: 'string' },
  });
  const modelFile = requireOption(v.model, 'model', 'the model file written by residuum learn');
  const frames = requireOption(v.frames, 'frames', 'the folder, video or scene to count');
  const threshold = numberOption(v.threshold, 'threshold', { min: 0.1, max: 100 });
  const every = numberOption(v.every, 'every', { min: 1, integer: true });
  const limit = numberOption(v.limit, 'limit', { min: 1, integer: true });
  if (v.json !== undefined && typeof v.json !== 'boolean') throw new UsageError('--json takes no value');
  const framesPerSecond = numberOption(v.fps, 'fps', { min: 0.01, max: 1000 });

  const { model, colour } = await loadModel(modelFile);
  if (v.colour && colour === undefined) throw new ModelFileError(`${modelFile}: learned without colour statistics; learn it again with --colour`);
  const zones: Zone[] = v.zones ? parseZones(await readFile(v.zones, 'utf8').catch((e: NodeJS.ErrnoException) => {
    throw new UsageError(`--zones: cannot read ${v.zones} (${e.code === 'ENOENT' ? 'no such file' : e.message})`);
  }), v.zones) : [wholeFrameZone];
  const source = { width: model.width, height: model.height, every, limit };
  const open = () => (v.colour && colour ? frameInput(frames, { ...source, colour: true }) : frameInput(frames, source));
  const found = await findPersonSize(model, zones, open(), { counter: { threshold } });
  for (const line of personSizeReport(found)) io.err.write(`${line}\n`);
  const options = { threshold, ...(v.colour && colour && { colourModel: colour }) };
  const each = v.each === true || isSnapshots(found.continuity);
  if (each && !v.each) io.err.write(`the frames look like separate pictures, not a sequence in time (${(found.continuity * 100).toFixed(0)} % of blobs overlap one in the frame before): each is counted on its own\n`);
  const counter = each
    ? createCounter(model, found.zones, options)
    : createSequenceCounter(model, found.zones, { ...options, ...(framesPerSecond !== undefined && { framesPerSecond }) });
  const print = v.json ? jsonLine : tableWriter(zones);
  const calibration = v.calibration === undefined ? undefined : await readCalibration(v.calibration, zones);
  /** With calibration, frames wait for the fit: their tallies and features (numbers only). */
  const held: { name: string; result: FrameCount; features: Map<string, CountFeatures> }[] = [];
  const points = new Map<string, CalibrationPoint[]>();

  let counted = 0;
  let skipped = 0;
  for await (const item of open()) {
    if (item.error) {
      skipped++;
      io.err.write(`skipped ${item.error.message}\n`);
      continue;
    }
    // In colour mode every good item carries its colour frame (frameInput with colour: true).
    const result = counter.count(item.frame, (item as ColourFrameItem).colour);
    counted++;
    if (calibration === undefined) {
      io.out.write(print(item.name, result));
      continue;
    }
    const features = zoneCountFeatures(result, counter.lastMask(), counter.zones);
    held.push({ name: item.name, result: { ...result, blobs: [] }, features });
    const given = calibration.get(item.name) ?? calibration.get(basename(item.name, extname(item.name)));
    for (const [zone, count] of Object.entries(given ?? ({} as Record<string, number>))) {
      const f = features.get(zone);
      if (f === undefined) continue;
      const list = points.get(zone) ?? [];
      list.push({ features: f, count });
      points.set(zone, list);
    }
  }
  if (calibration !== undefined) {
    const matched = new Set(held.map((h) => h.name).flatMap((name) => [name, basename(name, extname(name))]));
    const missing = [...calibration.keys()].filter((name) => !matched.has(name));
    if (missing.length > 0) io.err.write(`warning: ${missing.length} calibration frame${missing.length === 1 ? '' : 's'} not among the frames counted (${missing.slice(0, 3).join(', ')}${missing.length > 3 ? ', …' : ''})\n`);
    const fits = fitZoneCalibrations(points);
    for (const [zone, fit] of fits) io.err.write(`calibration: ${describeCalibration(zone, fit)}\n`);
    const regressions = regressionsInUse(fits);
    for (const h of held) io.out.write(print(h.name, calibratedTally(h.result, h.features, regressions)));
  }
  if (skipped > 0) io.err.write(`${skipped} frame${skipped === 1 ? '' : 's'} skipped, ${counted} counted\n`);
  if (counted === 0) {
    io.err.write(`residuum count: no frame of ${frames} could be counted\n`);
    return 1;
  }
  const mismatch = 'summary' in counter ? sceneMismatchWarning(counter.summary()) : undefined;
  if (mismatch) io.err.write(`warning: ${mismatch}\n`);
  return 0;
}


/**
 * Whether frames are separate pictures rather than a sequence in time: fewer than 80 % of their
 * blobs overlap a blob of the frame before (a video at a few frames per second or more keeps
 * nearly all; pictures of a room taken minutes apart share only the people who sat still; rule
 * of thumb of ours).
 */
export function isSnapshots(continuity: number): boolean {
  return continuity < 0.8;
}

/** What the first pass found about the size of one person, in lines for the terminal. */
export function personSizeReport(found: FoundPersonSize): string[] {
  const lines: string[] = [];
  const { suggestion } = found;
  if (found.applied.length > 0) {
    const zone = found.zones.find((z) => z.id === found.applied[0])!;
    if (zone.perspective) {
      const [a, b] = zone.perspective;
      lines.push(
        `person size: found in the frames (${suggestion.supporting} people seen alone agree): ${formatShare(a.area)} of the frame with the feet at ` +
          `row ${a.y.toFixed(2)}, ${formatShare(b.area)} at row ${b.y.toFixed(2)} (0 top, 1 bottom); used for zone${found.applied.length > 1 ? 's' : ''} ${found.applied.join(', ')}`,
      );
    } else {
      lines.push(`person size: ${formatShare(zone.personArea!)} of the frame, the median of ${suggestion.observations} people seen alone (${suggestion.message}); used for zone${found.applied.length > 1 ? 's' : ''} ${found.applied.join(', ')}`);
    }
  } else {
    const unset = found.zones.filter((z) => z.kind === 'room' && z.personArea === undefined && z.perspective === undefined).map((z) => z.id);
    if (unset.length > 0) {
      lines.push(`warning: person size not found in the frames (${suggestion.message}); zone${unset.length > 1 ? 's' : ''} ${unset.join(', ')} assume the default of 0.8 % of the frame per person — give personArea in the zones file if counts look off`);
    }
  }
  for (const m of found.mismatches) lines.push(`warning: ${m}`);
  return lines;
}

/** `{"frame":…,"total":…,"zones":{"<id>":{"count":…,"fill":…}}}` and a newline. */
function jsonLine(name: string, result: FrameCount): string {
  const zones: Record<string, { count: number; fill: number }> = {};
  for (const [id, z] of Object.entries(result.zones)) zones[id] = { count: z.count, fill: Math.round(z.fill * 10000) / 10000 };
  return JSON.stringify({ frame: name, total: result.total, zones }) + '\n';
}

/** A readable table: a header once, then one row per frame; shelves show fill % and items. */
function tableWriter(zones: readonly Zone[]): (name: string, result: FrameCount) => string {
  const widths = zones.map((z) => Math.max(z.id.length, z.kind === 'shelf' ? 10 : 5));
  let headerDone = false;
  return (name, result) => {
    let text = '';
    if (!headerDone) {
      headerDone = true;
      text += `${'frame'.padEnd(16)} ${'total'.padStart(5)}  ${zones.map((z, i) => z.id.padStart(widths[i])).join('  ')}\n`;
    }
    const cells = zones.map((z, i) => {
      const t = result.zones[z.id];
      const cell = z.kind === 'shelf' ? `${(t.fill * 100).toFixed(0)}% (${t.count})` : String(t.count);
      return cell.padStart(widths[i]);
    });
    return text + `${name.padEnd(16)} ${String(result.total).padStart(5)}  ${cells.join('  ')}\n`;
  };
}
