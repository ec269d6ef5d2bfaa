import { readFile } from 'node:fs/promises';
import { createCounter, wholeFrameZone } from '../counting/createCounter.ts';
import { loadModel, ModelFileError } from '../counting/modelFile.ts';
import { parseZones } from '../counting/parseZones.ts';
import type { Zone } from '../counting/zone.ts';
import type { FrameCount } from '../counting/createCounter.ts';
import type { ColourFrameItem } from '../frames/colourFrame.ts';
import { numberOption, parseOptions, requireOption, UsageError } from './args.ts';
import { frameInput } from './frameInput.ts';

export const countUsage = `residuum count --model <model file> --frames <folder|video|synthetic:scene>
                [--zones <zones file>] [--json] [--threshold T] [--every N] [--limit N] [--colour]

Counts people per room zone and fill per shelf zone in each frame.
  --model      a model file from residuum learn
  --frames     a folder of images, a video file ffmpeg reads, or synthetic:<scene>
  --zones      zones file (YAML or JSON; see config/zones.example.yaml); default: one zone "all"
  --json       one JSON object per frame and line instead of a table
  --threshold  foreground threshold in noise units for zones that set none (default 3)
  --every      count one frame in N (default 1)
  --limit      count at most N frames (default: all)
  --colour     discount cast shadows by colour (a model learned with --colour; a folder of images
               or synthetic:shadow-room)`;

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
  });
  const modelFile = requireOption(v.model, 'model', 'the model file written by residuum learn');
  const frames = requireOption(v.frames, 'frames', 'the folder, video or scene to count');
  const threshold = numberOption(v.threshold, 'threshold', { min: 0.1, max: 100 });
  const every = numberOption(v.every, 'every', { min: 1, integer: true });
  const limit = numberOption(v.limit, 'limit', { min: 1, integer: true });
  if (v.json !== undefined && typeof v.json !== 'boolean') throw new UsageError('--json takes no value');

  const { model, colour } = await loadModel(modelFile);
  if (v.colour && colour === undefined) throw new ModelFileError(`${modelFile}: learned without colour statistics; learn it again with --colour`);
  const zones: Zone[] = v.zones ? parseZones(await readFile(v.zones, 'utf8').catch((e: NodeJS.ErrnoException) => {
    throw new UsageError(`--zones: cannot read ${v.zones} (${e.code === 'ENOENT' ? 'no such file' : e.message})`);
  }), v.zones) : [wholeFrameZone];
  const grey = v.colour ? undefined : createCounter(model, zones, { threshold });
  const inColour = v.colour && colour ? createCounter(model, zones, { threshold, colourModel: colour }) : undefined;
  const print = v.json ? jsonLine : tableWriter(zones);

  let counted = 0;
  let skipped = 0;
  const source = { width: model.width, height: model.height, every, limit };
  for await (const item of inColour ? frameInput(frames, { ...source, colour: true }) : frameInput(frames, source)) {
    if (item.error) {
      skipped++;
      io.err.write(`skipped ${item.error.message}\n`);
      continue;
    }
    // In colour mode every good item carries its colour frame (frameInput with colour: true).
    const result = inColour ? inColour.count(item.frame, (item as ColourFrameItem).colour!) : grey!.count(item.frame);
    counted++;
    io.out.write(print(item.name, result));
  }
  if (skipped > 0) io.err.write(`${skipped} frame${skipped === 1 ? '' : 's'} skipped, ${counted} counted\n`);
  if (counted === 0) {
    io.err.write(`residuum count: no frame of ${frames} could be counted\n`);
    return 1;
  }
  return 0;
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
