import { readFile } from 'node:fs/promises';
import type { Zone } from '../domain/zone.ts';
import { UsageError } from './args.ts';

/**
 * Files of people counted per frame and zone: the truth `evaluate` scores against and the counts
 * by hand that `count` and `evaluate` calibrate with (one format for both).
 */

/** Counts per frame name, then per zone id. */
export type CountTruth = Map<string, Record<string, number>>;

/** Count truth: {"frames": {name: {zone: n | {count: n}}}} or JSON lines of {frame, zones}. */
export function parseCountTruth(text: string, source: string): CountTruth {
  const truth: CountTruth = new Map();
  const add = (name: unknown, zones: unknown, at: string) => {
    if (typeof name !== 'string' && typeof name !== 'number') throw new UsageError(`${source}: ${at} needs a frame name`);
    if (typeof zones !== 'object' || zones === null) throw new UsageError(`${source}: ${at}.zones must be an object of zone counts`);
    const counts: Record<string, number> = {};
    for (const [zone, raw] of Object.entries(zones as Record<string, unknown>)) {
      const n = typeof raw === 'object' && raw !== null ? (raw as { count?: unknown }).count : raw;
      if (typeof n !== 'number' || !Number.isFinite(n) || n < 0) throw new UsageError(`${source}: ${at}.${zone} must be a count ≥ 0, got ${JSON.stringify(raw)}`);
      counts[zone] = n;
    }
    truth.set(String(name), counts);
  };
  const trimmed = text.trim();
  let doc: unknown;
  try {
    doc = JSON.parse(trimmed);
  } catch {
    trimmed.split(/\r?\n/).forEach((line, i) => {
      if (line.trim() === '') return;
      let row: { frame?: unknown; zones?: unknown };
      try {
        row = JSON.parse(line);
      } catch {
        throw new UsageError(`${source}: line ${i + 1} is not JSON`);
      }
      add(row.frame, row.zones, `line ${i + 1}`);
    });
    return truth;
  }
  const framesObject = (doc as { frames?: unknown })?.frames;
  if (typeof framesObject !== 'object' || framesObject === null || Array.isArray(framesObject)) {
    throw new UsageError(`${source}: expected {"frames": {"<frame>": {"<zone>": count}}} or JSON lines of {"frame", "zones"}`);
  }
  for (const [name, zones] of Object.entries(framesObject)) add(name, zones, `frames["${name}"]`);
  return truth;
}

/** A calibration file: counts in the format of evaluate's truth, for room zones of the zones file. */
export async function readCalibration(file: string, zones: readonly Zone[]): Promise<CountTruth> {
  const text = await readFile(file, 'utf8').catch((e: NodeJS.ErrnoException) => {
    throw new UsageError(`--calibration: cannot read ${file} (${e.code === 'ENOENT' ? 'no such file' : e.message})`);
  });
  const counts = parseCountTruth(text, file);
  const rooms = new Set(zones.filter((z) => z.kind === 'room').map((z) => z.id));
  for (const [frame, byZone] of counts) {
    for (const [zone, n] of Object.entries(byZone)) {
      if (!rooms.has(zone)) throw new UsageError(`--calibration: ${file}: frame ${frame}: ${JSON.stringify(zone)} is not a room zone of ${zones.length === 1 && zones[0].id === 'all' ? 'the whole frame (zone "all")' : 'the zones file'}`);
      if (!Number.isInteger(n)) throw new UsageError(`--calibration: ${file}: frame ${frame}, zone ${zone}: a count of people must be a whole number, got ${n}`);
    }
  }
  return counts;
}
