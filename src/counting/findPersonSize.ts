import type { FrameItem } from '../domain/frame.ts';
import { random } from '../frames/synthetic/random.ts';
import type { Blob } from '../vision/labelComponents.ts';
import type { PreparedZone } from '../vision/prepareZones.ts';
import type { Subspace } from '../vision/subspace.ts';
import { createCounter, type CounterOptions } from './createCounter.ts';
import { createDriftingCounter } from './createDriftingCounter.ts';
import { createPersonSizeReservoir, PersonSizeState, type PersonSizeSuggestion } from './createPersonSizeReservoir.ts';
import type { PerspectiveReference, Zone } from '../domain/zone.ts';

/** A person size found in a sequence of frames, and the zones it was given to. */
export interface FoundPersonSize {
  /** What the frames showed (see createPersonSizeReservoir). */
  readonly suggestion: PersonSizeSuggestion;
  /**
   * When no line could be fitted but enough people were seen alone: the median area of one
   * person, fraction of the frame (used for every row).
   */
  readonly medianArea?: number;
  /** The zones, room zones without `personArea` or `perspective` of their own given the size found. */
  readonly zones: Zone[];
  /**
   * The model to count with: the learned one, or — when ghosts were cleared in this pass (someone
   * stood still through learning and later walked off) — a copy whose mean no longer shows them.
   */
  readonly model: Subspace;
  /** Pixels of the learned empty scene repaired because they showed something that went away. */
  readonly repairedPixels: number;
  /** Ids of the zones that were given the size found. */
  readonly applied: readonly string[];
  /** Room zones whose own `personArea` is far from what the frames show, in words (one line each). */
  readonly mismatches: readonly string[];
  /** Frames looked at. */
  readonly frames: number;
  /**
   * Share of blobs (in frames after the first) whose box overlaps a blob of the frame before:
   * near 1 for a video or frames in time order, low for separate snapshots. NaN without blobs.
   */
  readonly continuity: number;
}

export interface FindPersonSizeOptions {
  /** Frames looked at, at most (inclusive); whole number ≥ 1, default 3000. */
  maxFrames?: number;
  /** Options of the counter that finds the blobs (the zones' own thresholds apply). */
  counter?: CounterOptions;
  /** A zone's own personArea further than this factor from the one found is reported (> 1, default 2). */
  mismatchFactor?: number;
  /** People seen alone needed for a single median size when no line can be fitted (≥ 1, default 15). */
  minForMedian?: number;
  /**
   * Frames per second of the frames, when they are a sequence in time (a video): the pass then
   * follows drift on that clock and clears ghosts (createDriftingCounter), and `model` comes back
   * repaired (not yet used by count or evaluate: clearing ghosts can take a person sitting still
   * for one). Absent: the frames are looked at as they are, with the learned model.
   */
  framesPerSecond?: number;
}

/**
 * Finds how large one person looks at each image row from the frames themselves, for counting a
 * recorded sequence without being told the person size: counts the frames once, gathers blobs of
 * people standing or walking alone (createPersonSizeReservoir) and fits √area as a line in the
 * foot row robustly (learnPersonArea: least trimmed squares, then reweighting; Rousseeuw 1984).
 * A zone whose own people gave a line of their own (people sit at tables, stand in the aisles)
 * gets that one; the others get the line of the whole view.
 * The line is handed to the room zones that set neither `personArea` nor `perspective`, as two
 * reference people at the 10th and 90th percentile of the rows it was learned from (the line
 * passes exactly through both; prepareZones' guards then bound its extrapolation). When the
 * people seen alone all stood at one distance, their median area is used for every row instead.
 *
 * Only numbers are kept (foot rows and areas), never pixels.
 */
export async function findPersonSize(
  model: Subspace,
  zones: readonly Zone[],
  items: AsyncIterable<FrameItem>,
  options: FindPersonSizeOptions = {},
): Promise<FoundPersonSize> {
  const { maxFrames = 3000, counter: counterOptions = {}, mismatchFactor = 2, minForMedian = 15, framesPerSecond } = options;
  if (framesPerSecond !== undefined && !(framesPerSecond > 0 && Number.isFinite(framesPerSecond))) throw new RangeError(`framesPerSecond must be a number > 0, got ${framesPerSecond}`);
  if (!(Number.isInteger(maxFrames) && maxFrames >= 1)) throw new RangeError(`maxFrames must be a whole number ≥ 1, got ${maxFrames}`);
  if (!(mismatchFactor > 1)) throw new RangeError(`mismatchFactor must be > 1, got ${mismatchFactor}`);
  let frames = 0;
  // In time order the pass follows the scene as the sequence counter will, and clears ghosts.
  const counter =
    framesPerSecond === undefined
      ? createCounter(model, zones, counterOptions)
      : createDriftingCounter(model, zones, { ...counterOptions, clearGhosts: true, clock: () => (frames * 1000) / framesPerSecond });
  const repair = 'ghostRepair' in counter ? counter.ghostRepair() : new Float32Array(0);
  // Seeded, so that the reservoirs keep the same blobs run to run.
  const draws = random(1);
  const uniform = () => draws.uniform();
  // One reservoir for the whole view and one per room zone (people sit in one zone, stand in
  // another); every other frame: neighbouring frames show the same people.
  const whole = createPersonSizeReservoir(model, { every: 2, random: uniform });
  const rooms = counter.zones.filter((z) => z.kind === 'room');
  const perZone = new Map(rooms.map((z) => [z.id, createPersonSizeReservoir(model, { every: 2, random: uniform })]));
  let previous: readonly Blob[] = [];
  let followed = 0;
  let blobsAfterFirst = 0;
  for await (const item of items) {
    if (item.error) continue;
    const result = counter.count(item.frame);
    whole.observe(result, counter.zones);
    for (const zone of rooms) perZone.get(zone.id)!.observe(result, [zone]);
    const blobs = result.blobs.filter((b) => b.area >= minimumBlob(counter.zones));
    if (frames > 0) {
      for (const blob of blobs) {
        blobsAfterFirst++;
        if (previous.some((p) => p.x0 <= blob.x1 && p.x1 >= blob.x0 && p.y0 <= blob.y1 && p.y1 >= blob.y0)) followed++;
      }
    }
    previous = blobs;
    if (++frames >= maxFrames) break;
  }
  const sizeFrom = (reservoir: ReturnType<typeof createPersonSizeReservoir>): { suggestion: PersonSizeSuggestion; references?: PerspectiveReference[]; medianArea?: number } => {
    const suggestion = reservoir.suggestion();
    if (suggestion.state === PersonSizeState.ready) {
      const { intercept, slope, rows } = suggestion as Required<PersonSizeSuggestion>;
      const references = rows.map((y) => ({ y, area: Math.max(1e-6, intercept + slope * y) ** 2 }));
      if (references[0].y < references[1].y) return { suggestion, references };
    }
    const areas = reservoir.observations().map((o) => o.area).sort((a, b) => a - b);
    return areas.length >= minForMedian ? { suggestion, medianArea: areas[areas.length >> 1] } : { suggestion };
  };
  const overall = sizeFrom(whole);
  const { suggestion } = overall;
  const zoneSizes = new Map(rooms.map((z) => {
    const own = sizeFrom(perZone.get(z.id)!);
    return [z.id, own.references !== undefined ? own : overall.references !== undefined || overall.medianArea !== undefined ? overall : own];
  }));
  const expectedAt = (size: typeof overall, y: number): number | undefined => {
    if (size.references !== undefined) {
      const [a, b] = size.references;
      const root = Math.sqrt(a.area) + ((Math.sqrt(b.area) - Math.sqrt(a.area)) * (y - a.y)) / (b.y - a.y);
      return Math.max(1e-6, root) ** 2;
    }
    return size.medianArea;
  };
  const applied: string[] = [];
  const mismatches: string[] = [];
  const out = zones.map((zone): Zone => {
    const size = zoneSizes.get(zone.id);
    if (zone.kind !== 'room' || size === undefined) return zone;
    if (zone.personArea !== undefined || zone.perspective !== undefined) {
      const ys = zone.polygon.map(([, y]) => y);
      const middle = (Math.min(...ys) + Math.max(...ys)) / 2;
      const found = expectedAt(size, middle);
      if (zone.personArea !== undefined && found !== undefined) {
        const factor = zone.personArea / found;
        if (factor > mismatchFactor || factor < 1 / mismatchFactor) {
          mismatches.push(
            `zone ${zone.id}: its personArea ${formatShare(zone.personArea)} of the frame is ${factor > 1 ? `${factor.toFixed(1)} times larger` : `${(1 / factor).toFixed(1)} times smaller`} ` +
              `than the people seen alone in these frames (${formatShare(found)} at the zone's middle row); counts may be off by that factor — remove personArea to use the size found`,
          );
        }
      }
      return zone;
    }
    if (size.references !== undefined) {
      applied.push(zone.id);
      return { ...zone, perspective: size.references };
    }
    if (size.medianArea !== undefined) {
      applied.push(zone.id);
      return { ...zone, personArea: size.medianArea };
    }
    return zone;
  });
  const continuity = blobsAfterFirst === 0 ? Number.NaN : followed / blobsAfterFirst;
  const medianArea = overall.references === undefined ? overall.medianArea : undefined;
  const { model: repaired, pixels: repairedPixels } = repairedModel(model, repair);
  return { suggestion, ...(medianArea !== undefined && { medianArea }), model: repaired, repairedPixels, zones: out, applied, mismatches, frames, continuity };
}

/** The smallest blob any zone keeps (blobs below it are specks, not worth following). */
function minimumBlob(zones: readonly PreparedZone[]): number {
  let least = Infinity;
  for (const zone of zones) least = Math.min(least, zone.minBlobPixels);
  return least === Infinity ? 0 : least;
}

/** A share of the frame in words: 0.0123 → "1.23 %". */
export function formatShare(share: number): string {
  return `${(share * 100).toFixed(share < 0.001 ? 3 : 2)} %`;
}

/**
 * The learned model with the ghosts cleared in a pass added to its mean (`repair`: per pixel, what
 * clearing changed, as createDriftingCounter's ghostRepair); the same model when nothing was
 * cleared. Only the cleared pixels change: the drift followed in the pass belongs to its moment
 * and is left out.
 */
export function repairedModel(model: Subspace, repair: Float32Array): { model: Subspace; pixels: number } {
  let pixels = 0;
  for (let i = 0; i < repair.length; i++) if (repair[i] !== 0) pixels++;
  if (pixels === 0) return { model, pixels };
  const mean = Float32Array.from(model.mean);
  for (let i = 0; i < repair.length; i++) mean[i] += repair[i];
  return { model: { ...model, mean }, pixels };
}
