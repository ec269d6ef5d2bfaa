/**
 * Synthetic scene: a stock room shelf unit seen from the front. Invented data: boxes of various
 * grey levels and sizes are placed on the shelf sections and taken away over time.
 *
 * ```
 *  ┌───────────────────────────────┐
 *  │█▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀█│  top board
 *  │█  ▄▄    ▄▄▄        ▄▄   ▄▄▄  █│  shelf-top
 *  │█▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀█│
 *  │█ ▄▄▄▄       ▄▄  ▄▄▄▄      ▄▄ █│  shelf-middle
 *  │█▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀▀█│
 *  │█     ▄▄▄  ▄▄▄▄▄      ▄▄▄     █│  shelf-bottom
 *  └───────────────────────────────┘
 * ```
 *
 * Each section is split into `slots` equal lanes; a lane holds at most one box at a time, which
 * stands on the board, so boxes never overlap (neighbours may touch and merge into one blob).
 * A fifth of the boxes are only 12–20 grey levels off the shelf's back panel.
 *
 * Truth per section zone: count = boxes whose centroid lies in the zone polygon; fill = share of
 * the zone's pixels (pixel centres inside the polygon, as domain/rasterizeZone) covered by boxes.
 * Box edges and zone polygons lie on pixel boundaries, so the fill is exact.
 */
import type { GreyFrame } from '../../domain/frame.ts';
import type { Zone } from '../../domain/zone.ts';
import { pointInPolygon } from '../../domain/pointInPolygon.ts';
import { rasterizeZone } from '../../domain/rasterizeZone.ts';
import { lighting } from './lighting.ts';
import { random, type Random } from './random.ts';
import { assertFrameIndex, outputFrame, SceneObjectKind, type SceneObject, type SceneTruth, type SyntheticScene } from './scene.ts';
import { texture } from './texture.ts';

export interface StockRoomOptions {
  /** Seed of the shelf's look, the boxes and the lighting; a whole number, default 1. */
  seed?: number;
  /** Frame width in pixels; whole number 64..4096 inclusive, default 320. */
  width?: number;
  /** Frame height in pixels; whole number 48..4096 inclusive, default 240. */
  height?: number;
  /** Frames per second of scene time; > 0 and ≤ 120, default 10. */
  frameRate?: number;
  /** Shelf sections, top to bottom: 3 (shelf-top, -middle, -bottom) or 4 (shelf-top, -upper, -lower, -bottom); default 3. */
  sections?: 3 | 4;
  /** Lanes per section, each holding at most one box; whole number 2..20 inclusive, default 6. */
  slots?: number;
  /** Sensor noise standard deviation, grey levels; 0..50 inclusive, default 2. */
  noise?: number;
  /** Frames after which the lighting repeats; whole number ≥ 10, default 300 s of scene time. */
  lightingPeriod?: number;
}

export interface StockRoomScene extends SyntheticScene {
  /** Length of the box schedule in frames; frame t shows the boxes at t mod schedulePeriod. */
  readonly schedulePeriod: number;
}

interface Box {
  readonly id: string;
  readonly zone: number;
  readonly start: number;
  readonly end: number;
  /** Pixel bounds, x0 ≤ x < x1, y0 ≤ y < y1. */
  readonly x0: number;
  readonly y0: number;
  readonly x1: number;
  readonly y1: number;
  readonly grey: number;
  readonly label: number | undefined;
}

interface Section {
  readonly id: string;
  readonly name: string;
  /** Interior in pixels, x0 ≤ x < x1, y0 ≤ y < y1. */
  readonly x0: number;
  readonly y0: number;
  readonly x1: number;
  readonly y1: number;
}

const SECTION_IDS = {
  3: [
    ['shelf-top', 'Top shelf'],
    ['shelf-middle', 'Middle shelf'],
    ['shelf-bottom', 'Bottom shelf'],
  ],
  4: [
    ['shelf-top', 'Top shelf'],
    ['shelf-upper', 'Upper middle shelf'],
    ['shelf-lower', 'Lower middle shelf'],
    ['shelf-bottom', 'Bottom shelf'],
  ],
} as const;

/**
 * Builds the stock room (see the module comment).
 *
 * Example: createStockRoom().frameAt(0).truth is
 * { 'shelf-top': { count: 5, fill: 0.390… }, 'shelf-middle': { count: 5, fill: 0.438… }, 'shelf-bottom': { count: 5, fill: 0.410… } }.
 */
export function createStockRoom(options: StockRoomOptions = {}): StockRoomScene {
  const { seed = 1, width = 320, height = 240, frameRate = 10, sections: sectionCount = 3, slots = 6, noise = 2 } = options;
  if (!Number.isInteger(seed)) throw new RangeError(`seed must be a whole number, got ${String(seed)}`);
  if (!(Number.isInteger(width) && width >= 64 && width <= 4096)) throw new RangeError(`width must be a whole number in 64..4096, got ${String(width)}`);
  if (!(Number.isInteger(height) && height >= 48 && height <= 4096)) throw new RangeError(`height must be a whole number in 48..4096, got ${String(height)}`);
  if (!(frameRate > 0 && frameRate <= 120)) throw new RangeError(`frameRate must be in (0, 120] frames per second, got ${String(frameRate)}`);
  if (sectionCount !== 3 && sectionCount !== 4) throw new RangeError(`sections must be 3 or 4, got ${String(sectionCount)}`);
  if (!(Number.isInteger(slots) && slots >= 2 && slots <= 20)) throw new RangeError(`slots must be a whole number in 2..20, got ${String(slots)}`);
  const { lightingPeriod = Math.round(300 * frameRate) } = options;

  const u = height / 240;
  const frameArea = width * height;
  const light = lighting(
    { width, height },
    { seed: seed + 0x5707, period: lightingPeriod, daylight: 0.08, exposure: 3, noise, lamp: { centre: [0.72, 0.3], radius: 0.28, boost: 0.15 }, lampSwitches: 4 },
  );

  // Shelf geometry in whole pixels.
  const ux0 = Math.round(0.07 * width);
  const ux1 = Math.round(0.93 * width);
  const post = Math.max(2, Math.round(0.028 * width));
  const uy0 = Math.round(0.04 * height);
  const uy1 = Math.round(0.95 * height);
  const board = Math.max(2, Math.round(7 * u));
  const boardTops = Array.from({ length: sectionCount + 1 }, (_, k) => uy0 + Math.round((k * (uy1 - uy0 - board)) / sectionCount));
  const sections: Section[] = SECTION_IDS[sectionCount].map(([id, name], s) => ({
    id,
    name,
    x0: ux0 + post,
    x1: ux1 - post,
    y0: boardTops[s] + board,
    y1: boardTops[s + 1],
  }));

  const background = paintShelf(width, height, seed, { ux0, ux1, uy0, uy1, post, board, boardTops, sections });
  const panelRef = sections.map((s) => {
    let sum = 0;
    for (let y = s.y0; y < s.y1; y++) for (let x = s.x0; x < s.x1; x++) sum += background[y * width + x];
    return sum / ((s.y1 - s.y0) * (s.x1 - s.x0));
  });

  const schedulePeriod = Math.round(3600 * frameRate);
  const boxes = buildBoxes(random(seed, 0x5707), sections, slots, schedulePeriod, frameRate, u, panelRef);

  const zones: Zone[] = sections.map((s, k) => {
    const mine = boxes.filter((b) => b.zone === k);
    const meanArea = mine.reduce((a, b) => a + (b.x1 - b.x0) * (b.y1 - b.y0), 0) / Math.max(1, mine.length);
    const slotW = (s.x1 - s.x0) / slots;
    const smallest = Math.max(1, Math.round(0.6 * slotW - 1)) * Math.max(1, Math.round(0.4 * (s.y1 - s.y0) - 1));
    return {
      id: s.id,
      name: s.name,
      kind: 'shelf',
      polygon: [
        [s.x0 / width, s.y0 / height],
        [s.x1 / width, s.y0 / height],
        [s.x1 / width, s.y1 / height],
        [s.x0 / width, s.y1 / height],
      ],
      personArea: meanArea / frameArea,
      minBlobArea: (0.5 * smallest) / frameArea,
    };
  });
  const zoneMasks = zones.map((z) => rasterizeZone(z.polygon, { width, height }).data);
  const zonePixels = zoneMasks.map((m) => m.reduce((a, v) => a + v, 0));

  const boxesAt = (t: number): Box[] => {
    const tau = t % schedulePeriod;
    return boxes.filter((b) => b.start <= tau && tau < b.end);
  };

  const work = new Float32Array(frameArea);

  return {
    id: 'stock-room',
    name: 'Stock room shelves',
    width,
    height,
    zones,
    frameRate,
    lightingPeriod: light.period,
    lamp: light.lamp,
    schedulePeriod,
    emptyFrameAt(t: number, out?: GreyFrame) {
      assertFrameIndex(t);
      const frame = outputFrame(width, height, out);
      light.render(background, t, 1, frame.data);
      return frame;
    },
    frameAt(t: number, out?: GreyFrame) {
      assertFrameIndex(t);
      const frame = outputFrame(width, height, out);
      const present = boxesAt(t);
      work.set(background);
      for (const b of present) drawBox(work, width, b, u);
      light.render(work, t, 0, frame.data);
      const truth: SceneTruth = {};
      zones.forEach((zone, k) => {
        const mask = zoneMasks[k];
        let count = 0;
        let covered = 0;
        for (const b of present) {
          if (pointInPolygon((b.x0 + b.x1) / 2 / width, (b.y0 + b.y1) / 2 / height, zone.polygon)) count++;
          for (let y = b.y0; y < b.y1; y++) for (let x = b.x0; x < b.x1; x++) covered += mask[y * width + x];
        }
        truth[zone.id] = { count, fill: zonePixels[k] > 0 ? covered / zonePixels[k] : 0 };
      });
      return { frame, truth };
    },
    objectsAt(t: number): SceneObject[] {
      assertFrameIndex(t);
      return boxesAt(t).map((b) => ({
        id: b.id,
        kind: SceneObjectKind.item,
        box: [b.x0 / width, b.y0 / height, b.x1 / width, b.y1 / height],
        anchor: [(b.x0 + b.x1) / 2 / width, (b.y0 + b.y1) / 2 / height],
      }));
    },
  };
}

/**
 * One hour of boxes. Each section is restocked every 4–8 minutes (the first time at frame 0):
 * every empty lane then gets a box (with probability 0.9) within 20 s; boxes are taken one by
 * one, each after an exponential time of mean 3 min (at least 10 s), and now and then a box is
 * put back into an emptied lane between restocks. So a section's fill rises in steps at a
 * restock and drains in between. Each box has its own size, place in its lane and grey level.
 */
function buildBoxes(
  rng: Random,
  sections: readonly Section[],
  slots: number,
  period: number,
  frameRate: number,
  u: number,
  panelRef: readonly number[],
): Box[] {
  const sec = (v: number) => Math.round(v * frameRate);
  const boxes: Box[] = [];
  sections.forEach((s, k) => {
    const restocks = [0];
    while (restocks[restocks.length - 1] < period) restocks.push(restocks[restocks.length - 1] + sec(rng.between(240, 480)));
    const slotW = (s.x1 - s.x0) / slots;
    const clear = s.y1 - s.y0;
    for (let j = 0; j < slots; j++) {
      const sa = Math.round(s.x0 + j * slotW);
      const sb = Math.round(s.x0 + (j + 1) * slotW);
      let free = 0; // the lane is empty from this frame on
      let n = 0;
      const place = (start: number) => {
        const w = Math.max(1, Math.min(sb - sa - 1, Math.round((sb - sa) * rng.between(0.6, 0.95))));
        const h = Math.max(1, Math.min(clear - Math.round(3 * u), Math.round(clear * rng.between(0.4, 0.92))));
        const x0 = sa + rng.int(0, Math.max(0, sb - sa - w));
        const kind = rng.uniform();
        const grey =
          kind < 0.2
            ? panelRef[k] + (rng.chance(0.5) ? 1 : -1) * rng.between(12, 20) // low contrast against the back panel
            : kind < 0.6
              ? rng.between(135, 175) // cardboard
              : kind < 0.8
                ? rng.between(195, 225) // white
                : rng.between(35, 65); // dark
        const label = kind >= 0.2 && rng.chance(0.5) ? (grey > 120 ? rng.between(215, 240) : rng.between(150, 200)) : undefined;
        const end = Math.min(period, start + Math.max(sec(10), Math.round(-Math.log(1 - rng.uniform()) * sec(180))));
        boxes.push({ id: `${s.id}:${j}:${n++}`, zone: k, start, end, x0, x1: x0 + w, y0: s.y1 - h, y1: s.y1, grey, label });
        free = end;
      };
      for (let r = 0; r + 1 < restocks.length; r++) {
        const at = restocks[r] + (r === 0 ? 0 : sec(rng.between(0, 20)));
        if (free <= at && at < period && rng.chance(0.9)) place(at);
        // A box put back between restocks, after the lane has emptied.
        if (rng.chance(0.25)) {
          const back = free + sec(rng.between(5, 120));
          if (back < restocks[r + 1] && back < period) place(back);
        }
      }
    }
  });
  return boxes;
}

function drawBox(img: Float32Array, width: number, b: Box, u: number): void {
  const lid = Math.max(1, Math.round(2 * u));
  const side = Math.max(1, Math.round(0.15 * (b.x1 - b.x0)));
  const lw = Math.round(0.5 * (b.x1 - b.x0));
  const lh = Math.round(0.3 * (b.y1 - b.y0));
  const lx0 = Math.round((b.x0 + b.x1 - lw) / 2);
  const ly0 = Math.round((b.y0 + b.y1 - lh) / 2);
  for (let y = b.y0; y < b.y1; y++) {
    for (let x = b.x0; x < b.x1; x++) {
      let v = b.grey;
      if (y < b.y0 + lid) v += 16; // top edge catches the light
      else if (x < b.x0 + side) v -= 12; // shaded side
      if (b.label !== undefined && x >= lx0 && x < lx0 + lw && y >= ly0 && y < ly0 + lh) v = b.label;
      img[y * width + x] = v;
    }
  }
}

interface ShelfGeometry {
  ux0: number;
  ux1: number;
  uy0: number;
  uy1: number;
  post: number;
  board: number;
  boardTops: readonly number[];
  sections: readonly Section[];
}

function paintShelf(width: number, height: number, seed: number, g: ShelfGeometry): Float32Array {
  const u = height / 240;
  const bg = new Float32Array(width * height);
  const wallTex = texture({ width, height }, { seed, cellX: 48 * u, cellY: 48 * u, octaves: 2 });
  const grain = texture({ width, height }, { seed: seed + 1, cellX: 30 * u, cellY: 1.5 * u, octaves: 2 });
  const vgrain = texture({ width, height }, { seed: seed + 2, cellX: 1.5 * u, cellY: 30 * u, octaves: 2 });
  const fill = (x0: number, y0: number, x1: number, y1: number, value: (x: number, y: number, i: number) => number) => {
    for (let y = Math.max(0, y0); y < Math.min(height, y1); y++) {
      for (let x = Math.max(0, x0); x < Math.min(width, x1); x++) bg[y * width + x] = value(x, y, y * width + x);
    }
  };
  // Wall, and the floor below the unit.
  fill(0, 0, width, height, (x, y, i) => 170 - (12 * y) / height + 4 * wallTex[i]);
  fill(0, g.uy1, width, height, (x, y, i) => 112 + 5 * wallTex[i]);
  // Back panels: darker right under each board (its shadow), lighter towards the section's floor.
  for (const s of g.sections) {
    fill(g.ux0, s.y0, g.ux1, s.y1, (x, y, i) => {
      const down = (y - s.y0) / (s.y1 - s.y0);
      return 70 + 22 * down + 5 * grain[i] - (y - s.y0 < 4 * u ? 12 : 0);
    });
  }
  // Boards with a lit front edge and a dark underside line.
  for (const top of g.boardTops) {
    fill(g.ux0, top, g.ux1, top + g.board, (x, y, i) => 116 + 4 * grain[i]);
    fill(g.ux0, top, g.ux1, top + 1, () => 140);
    fill(g.ux0, top + g.board - 1, g.ux1, top + g.board, () => 84);
  }
  // Side posts.
  fill(g.ux0, g.uy0, g.ux0 + g.post, g.uy1, (x, y, i) => 84 + 5 * vgrain[i]);
  fill(g.ux1 - g.post, g.uy0, g.ux1, g.uy1, (x, y, i) => 78 + 5 * vgrain[i]);
  // Mild vignetting.
  for (let y = 0; y < height; y++) {
    const dy = (y + 0.5) / height - 0.5;
    for (let x = 0; x < width; x++) {
      const dx = (x + 0.5) / width - 0.5;
      bg[y * width + x] *= 1 - 0.2 * (dx * dx + dy * dy);
    }
  }
  return bg;
}
