/**
 * Synthetic scene: a library reading room seen from a high camera on the wall opposite the
 * bookshelves. Invented data, no real people: visitors are soft-edged grey ellipses with a head.
 *
 * Layout (normalised x right, y down):
 *
 * ```
 *  y 0.00 ┌──────────────────────────────────────────────┐
 *         │ wall   ▐books▌  ▐books▌  ▐books▌  ▐books▌     │  bookshelves along the back wall
 *  y 0.34 ├──────────────────────────────────────────────┤  skirting line
 *         │        [ stacks: aisle by the shelves ]       │
 *  y 0.52 │  ·                                            │
 *         │  ·      ┌─tables────────────────────────────┐ │
 *         │ [entr.] │  ▭ T1 ▭        ▭ T2 ▭             │ │
 *  door → │ [ance ] │        ▭ T3 ▭                     │ │
 *  y 0.98 └─────────┴───────────────────────────────────┴─┘
 * ```
 *
 * Visitors come in through the door on the left (from outside the frame), walk to the stacks or
 * a table, browse standing, sit for a while, and leave the same way; about a third come in pairs
 * that walk and sit side by side with overlapping shapes (one merged blob). A quarter wear
 * clothes only 12–20 grey levels away from the floor. People keep a constant size (no
 * perspective yet); seated people are smaller than standing ones, so each zone's `personArea`
 * is the drawn area of the posture usual there (seated at the tables, standing elsewhere).
 *
 * Truth: per zone, the number of people whose foot point (bottom centre of the drawn shape's
 * bounding box) lies in the zone polygon (even–odd rule of domain/pointInPolygon). Zone polygons
 * keep a margin from the frame edges, so a counted person is entirely inside the frame.
 *
 * The visit schedule is generated once from the seed for one hour of scene time and repeats
 * (the room is empty at each repetition); lighting repeats every `lightingPeriod` frames.
 */
import type { GreyFrame } from '../../domain/frame.ts';
import type { NormalisedPoint, Zone } from '../../domain/zone.ts';
import { pointInPolygon } from '../../domain/pointInPolygon.ts';
import { lighting } from './lighting.ts';
import { random, type Random } from './random.ts';
import {
  assertFrameIndex,
  outputFrame,
  Posture,
  SceneObjectKind,
  type SceneObject,
  type SceneTruth,
  type SyntheticScene,
} from './scene.ts';
import { texture } from './texture.ts';

export interface ReadingRoomOptions {
  /** Seed of the layout, the visits and the lighting; a whole number, default 1. */
  seed?: number;
  /** Frame width in pixels; whole number 64..4096 inclusive, default 320. */
  width?: number;
  /** Frame height in pixels; whole number 48..4096 inclusive, default 240. People scale with it. */
  height?: number;
  /** Frames per second of scene time (walking speed and dwell times are per second); > 0 and ≤ 120, default 10. */
  frameRate?: number;
  /** Sensor noise standard deviation, grey levels; 0..50 inclusive, default 2.5. */
  noise?: number;
  /** Frames after which the lighting repeats; whole number ≥ 10, default 300 s of scene time (3000 frames at 10 fps). */
  lightingPeriod?: number;
}

/** The reading room scene. */
export interface ReadingRoomScene extends SyntheticScene {
  /** Length of the visit schedule in frames; frame t shows the visits at t mod schedulePeriod. */
  readonly schedulePeriod: number;
}

type Rect = readonly [number, number, number, number]; // normalised x0, y0, x1, y1

interface Leg {
  readonly t0: number;
  readonly t1: number;
  readonly from: NormalisedPoint;
  readonly to: NormalisedPoint;
  readonly posture: Posture;
}

interface Look {
  readonly shirt: number;
  readonly trousers: number;
  readonly hair: number;
}

interface Member {
  readonly id: string;
  /** Offset from the group's path, normalised. */
  readonly dx: number;
  readonly dy: number;
  readonly look: Look;
}

interface Visit {
  readonly group: string;
  readonly start: number;
  readonly end: number;
  readonly legs: readonly Leg[];
  readonly members: readonly Member[];
}

interface Seat {
  readonly x: number;
  readonly y: number;
  /** y of the walkway the seat is reached from. */
  readonly aisle: number;
  /** Index of the seat row (table side) and position along it. */
  readonly row: number;
  readonly slot: number;
}

interface DrawnPerson {
  readonly member: Member;
  readonly group: string;
  readonly pair: boolean;
  readonly x: number;
  readonly y: number;
  readonly posture: Posture;
}

const WALL_BOTTOM = 0.34;
const TABLES: readonly Rect[] = [
  [0.38, 0.585, 0.6, 0.675],
  [0.7, 0.585, 0.92, 0.675],
  [0.46, 0.815, 0.84, 0.885],
];
const DOOR: NormalisedPoint = [-0.07, 0.8];
const CORRIDOR_X = 0.31;
const TOP_AISLE = 0.555;

/**
 * Person shape in units of height/240 pixels: body ellipse radii (its bottom is the foot point),
 * head radius, and how far the head's centre sits above the body's top (the two overlap).
 */
const SHAPE = {
  standing: { rx: 7, ry: 16, head: 4.5, neck: 2.5 },
  seated: { rx: 8, ry: 10.5, head: 4.5, neck: 2.5 },
} as const;
const SOFT_EDGE = 1.5; // px over which the alpha ramps from 1 to 0

/**
 * Builds the reading room (see the module comment).
 *
 * Example: createReadingRoom().frameAt(300).truth is
 * { entrance: { count: 2 }, stacks: { count: 2 }, tables: { count: 4 } }.
 */
export function createReadingRoom(options: ReadingRoomOptions = {}): ReadingRoomScene {
  const { seed = 1, width = 320, height = 240, frameRate = 10, noise = 2.5 } = options;
  if (!Number.isInteger(seed)) throw new RangeError(`seed must be a whole number, got ${String(seed)}`);
  if (!(Number.isInteger(width) && width >= 64 && width <= 4096)) throw new RangeError(`width must be a whole number in 64..4096, got ${String(width)}`);
  if (!(Number.isInteger(height) && height >= 48 && height <= 4096)) throw new RangeError(`height must be a whole number in 48..4096, got ${String(height)}`);
  if (!(frameRate > 0 && frameRate <= 120)) throw new RangeError(`frameRate must be in (0, 120] frames per second, got ${String(frameRate)}`);
  const { lightingPeriod = Math.round(300 * frameRate) } = options;

  const u = height / 240; // pixels per shape unit
  const frameArea = width * height;
  const light = lighting(
    { width, height },
    { seed, period: lightingPeriod, daylight: 0.15, exposure: 4, noise, lamp: { centre: [0.64, 0.72], radius: 0.2, boost: 0.35 }, lampSwitches: 4 },
  );

  const seats = buildSeats(width, u);
  const background = paintBackground(width, height, seed, seats);
  const floorRef = meanOver(background, width, height, [0.05, 0.6, 0.3, 0.98]);
  const schedulePeriod = Math.round(3600 * frameRate);
  const visits = buildSchedule({ seed, frameRate, width, height, u, seats, schedulePeriod, floorRef });

  const standingArea = shapeArea(SHAPE.standing, u) / frameArea;
  const seatedArea = shapeArea(SHAPE.seated, u) / frameArea;
  const zones: Zone[] = [
    {
      id: 'entrance',
      name: 'Entrance',
      kind: 'room',
      polygon: [[0.04, 0.6], [0.3, 0.6], [0.3, 0.98], [0.04, 0.98]],
      personArea: standingArea,
      minBlobArea: 0.25 * standingArea,
    },
    {
      id: 'stacks',
      name: 'Stacks aisle',
      kind: 'room',
      polygon: [[0.04, 0.36], [0.96, 0.36], [0.96, 0.52], [0.04, 0.52]],
      personArea: standingArea,
      minBlobArea: 0.25 * standingArea,
    },
    {
      id: 'tables',
      name: 'Reading tables',
      kind: 'room',
      polygon: [[0.34, 0.54], [0.97, 0.54], [0.97, 0.98], [0.34, 0.98]],
      personArea: seatedArea,
      minBlobArea: 0.25 * seatedArea,
    },
  ];

  const peopleAt = (t: number): DrawnPerson[] => {
    const tau = t % schedulePeriod;
    const people: DrawnPerson[] = [];
    for (const visit of visits) {
      if (visit.start > tau) break;
      if (tau >= visit.end) continue;
      const leg = visit.legs.find((l) => tau < l.t1) ?? visit.legs[visit.legs.length - 1];
      const s = leg.t1 > leg.t0 ? Math.min(1, Math.max(0, (tau - leg.t0) / (leg.t1 - leg.t0))) : 1;
      const x = leg.from[0] + (leg.to[0] - leg.from[0]) * s;
      const y = leg.from[1] + (leg.to[1] - leg.from[1]) * s;
      for (const member of visit.members) {
        people.push({ member, group: visit.group, pair: visit.members.length > 1, x: x + member.dx, y: y + member.dy, posture: leg.posture });
      }
    }
    // Back to front: farther (smaller foot y) first, ties by id for a stable order.
    people.sort((a, b) => a.y - b.y || (a.member.id < b.member.id ? -1 : 1));
    return people;
  };

  const toObject = (p: DrawnPerson): SceneObject => {
    const shape = SHAPE[p.posture];
    const halfW = (shape.rx * u) / width;
    const top = ((2 * shape.ry + shape.neck + shape.head) * u) / height;
    return {
      id: p.member.id,
      kind: SceneObjectKind.person,
      box: [p.x - halfW, p.y - top, p.x + halfW, p.y],
      anchor: [p.x, p.y],
      group: p.pair ? p.group : undefined,
      posture: p.posture,
    };
  };

  const work = new Float32Array(frameArea);

  const scene: ReadingRoomScene = {
    id: 'reading-room',
    name: 'Library reading room',
    width,
    height,
    zones,
    frameRate,
    lightingPeriod: light.period,
    lamp: light.lamp,
    schedulePeriod,
    emptyFrameAt(t, out) {
      assertFrameIndex(t);
      const frame = outputFrame(width, height, out);
      light.render(background, t, 1, frame.data);
      return frame;
    },
    frameAt(t, out) {
      assertFrameIndex(t);
      const frame = outputFrame(width, height, out);
      const people = peopleAt(t);
      work.set(background);
      for (const p of people) drawPerson(work, width, height, p, u);
      light.render(work, t, 0, frame.data);
      const truth: SceneTruth = {};
      for (const zone of zones) {
        let count = 0;
        for (const p of people) if (pointInPolygon(p.x, p.y, zone.polygon)) count++;
        truth[zone.id] = { count };
      }
      return { frame, truth };
    },
    objectsAt(t) {
      assertFrameIndex(t);
      return peopleAt(t).map(toObject);
    },
  };
  return scene;
}

// ---------------------------------------------------------------------------------------------
// Background

function paintBackground(width: number, height: number, seed: number, seats: readonly Seat[]): Float32Array {
  const u = height / 240;
  const rng = random(seed, 0xb4c6);
  const bg = new Float32Array(width * height);
  const wallTex = texture({ width, height }, { seed, cellX: 40 * u, cellY: 40 * u, octaves: 2 });
  const carpet = texture({ width, height }, { seed: seed + 1, cellX: 14 * u, cellY: 10 * u, octaves: 3 });
  const fine = texture({ width, height }, { seed: seed + 2, cellX: 2, cellY: 2, octaves: 1 });
  const grain = texture({ width, height }, { seed: seed + 3, cellX: 24 * u, cellY: 1.5 * u, octaves: 2 });
  const wallRow = Math.round(WALL_BOTTOM * height);

  // Wall and floor.
  for (let y = 0; y < height; y++) {
    const ny = (y + 0.5) / height;
    for (let x = 0; x < width; x++) {
      const nx = (x + 0.5) / width;
      const i = y * width + x;
      if (y < wallRow) {
        bg[i] = 158 - 14 * ny + 4 * wallTex[i];
      } else {
        const depth = (ny - WALL_BOTTOM) / (1 - WALL_BOTTOM);
        bg[i] = 108 + 28 * depth + 10 * nx + 6 * carpet[i] + 2.5 * fine[i];
      }
    }
  }
  // Skirting board where wall meets floor.
  fillRect(bg, width, height, [0, WALL_BOTTOM - 3 / 240, 1, WALL_BOTTOM], 92);

  // Bookshelf units along the back wall.
  const units = 4;
  const margin = 0.03;
  const gap = 0.03;
  const unitW = (1 - 2 * margin - (units - 1) * gap) / units;
  const shelfTop = 0.05;
  const shelfBottom = WALL_BOTTOM - 2 / 240;
  const rows = 4;
  for (let k = 0; k < units; k++) {
    const x0 = margin + k * (unitW + gap);
    const x1 = x0 + unitW;
    fillRect(bg, width, height, [x0, shelfTop, x1, shelfBottom], 72, grain, 5);
    const px0 = Math.round(x0 * width) + Math.max(1, Math.round(2 * u));
    const px1 = Math.round(x1 * width) - Math.max(1, Math.round(2 * u));
    const rowH = (shelfBottom - shelfTop - 4 / 240) / rows;
    for (let r = 0; r < rows; r++) {
      const ry0 = shelfTop + 3 / 240 + r * rowH;
      const ry1 = ry0 + rowH - 3 / 240; // board below
      const py0 = Math.round(ry0 * height);
      const py1 = Math.round(ry1 * height);
      // Dark back of the shelf, then book spines standing on the board.
      fillRectPx(bg, width, height, px0, py0, px1, py1, 44);
      let x = px0 + rng.int(0, 2);
      while (x < px1 - 1) {
        if (rng.chance(0.07)) {
          x += rng.int(2, Math.max(3, Math.round(8 * u)));
          continue;
        }
        const w = Math.min(px1 - x, rng.int(Math.max(1, Math.round(2 * u)), Math.max(2, Math.round(5 * u))));
        const h = Math.round((py1 - py0) * rng.between(0.62, 0.97));
        const grey = rng.chance(0.15) ? rng.between(175, 205) : rng.between(45, 165);
        fillRectPx(bg, width, height, x, py1 - h, x + w, py1, grey);
        // A darker line at the spine's edge now and then.
        if (w >= 3 && rng.chance(0.5)) fillRectPx(bg, width, height, x + w - 1, py1 - h, x + w, py1, grey * 0.75);
        x += w;
      }
      // Shelf board with a lit front edge.
      fillRectPx(bg, width, height, px0 - 1, py1, px1 + 1, py1 + Math.max(2, Math.round(3 * u)), 96);
      fillRectPx(bg, width, height, px0 - 1, py1, px1 + 1, py1 + 1, 118);
    }
  }

  // Rug under the tables.
  fillRect(bg, width, height, [0.35, 0.55, 0.95, 0.96], -12, undefined, 0, true);
  strokeRect(bg, width, height, [0.35, 0.55, 0.95, 0.96], -10);

  // Doormat at the entrance.
  fillRect(bg, width, height, [0, 0.71, 0.1, 0.89], 88, carpet, 6);
  strokeRect(bg, width, height, [0, 0.71, 0.1, 0.89], -14);

  // Chairs, then tables on top (a chair's back shows above/below its table).
  for (const seat of seats) {
    const cw = (7 * u) / width;
    if (seat.row % 2 === 0) fillRect(bg, width, height, [seat.x - cw, seat.y - (12 * u) / height, seat.x + cw, seat.y - u / height], 62);
    else fillRect(bg, width, height, [seat.x - cw, seat.y - (8 * u) / height, seat.x + cw, seat.y + (1 * u) / height], 62);
  }
  for (const table of TABLES) {
    const [x0, y0, x1, y1] = table;
    // Contact shadow on the floor below the table's front edge.
    fillRect(bg, width, height, [x0 + 0.004, y1, x1 + 0.004, y1 + (5 * u) / height], -18, undefined, 0, true);
    fillRect(bg, width, height, [x0, y0, x1, y1], 86, grain, 5);
    fillRect(bg, width, height, [x0, y1 - (3 * u) / height, x1, y1], 60); // front face
    fillRect(bg, width, height, [x0, y0, x1, y0 + 1 / height], 104); // lit far edge
  }

  // Vignetting: 1 − 0.15·r², r = distance from the centre relative to the half-diagonal.
  for (let y = 0; y < height; y++) {
    const dy = (y + 0.5) / height - 0.5;
    for (let x = 0; x < width; x++) {
      const dx = (x + 0.5) / width - 0.5;
      bg[y * width + x] *= 1 - 0.3 * (dx * dx + dy * dy);
    }
  }
  return bg;
}

function fillRectPx(img: Float32Array, width: number, height: number, x0: number, y0: number, x1: number, y1: number, value: number): void {
  const xa = Math.max(0, Math.round(x0));
  const xb = Math.min(width, Math.round(x1));
  const ya = Math.max(0, Math.round(y0));
  const yb = Math.min(height, Math.round(y1));
  for (let y = ya; y < yb; y++) img.fill(value, y * width + xa, y * width + xb);
}

/** Fills a normalised rectangle with `value` (+ amount·tex), or adds `value` when `add` is set. */
function fillRect(
  img: Float32Array,
  width: number,
  height: number,
  rect: Rect,
  value: number,
  tex?: Float32Array,
  amount = 0,
  add = false,
): void {
  const xa = Math.max(0, Math.round(rect[0] * width));
  const xb = Math.min(width, Math.round(rect[2] * width));
  const ya = Math.max(0, Math.round(rect[1] * height));
  const yb = Math.min(height, Math.round(rect[3] * height));
  for (let y = ya; y < yb; y++) {
    for (let x = xa; x < xb; x++) {
      const i = y * width + x;
      const v = value + (tex === undefined ? 0 : amount * tex[i]);
      img[i] = add ? img[i] + v : v;
    }
  }
}

function strokeRect(img: Float32Array, width: number, height: number, rect: Rect, delta: number): void {
  const xa = Math.max(0, Math.round(rect[0] * width));
  const xb = Math.min(width, Math.round(rect[2] * width)) - 1;
  const ya = Math.max(0, Math.round(rect[1] * height));
  const yb = Math.min(height, Math.round(rect[3] * height)) - 1;
  for (let x = xa; x <= xb; x++) {
    img[ya * width + x] += delta;
    img[yb * width + x] += delta;
  }
  for (let y = ya + 1; y < yb; y++) {
    img[y * width + xa] += delta;
    img[y * width + xb] += delta;
  }
}

function meanOver(img: Float32Array, width: number, height: number, rect: Rect): number {
  let sum = 0;
  let n = 0;
  for (let y = Math.round(rect[1] * height); y < Math.round(rect[3] * height); y++) {
    for (let x = Math.round(rect[0] * width); x < Math.round(rect[2] * width); x++) {
      sum += img[y * width + x];
      n++;
    }
  }
  return sum / n;
}

// ---------------------------------------------------------------------------------------------
// Seats and visits

/** Seats along both long sides of each table; rows 0, 2, 4 are far sides, 1, 3, 5 near sides. */
function buildSeats(width: number, u: number): Seat[] {
  const seats: Seat[] = [];
  const spacing = (22 * u) / width;
  TABLES.forEach(([x0, y0, x1, y1], k) => {
    const n = Math.max(1, Math.floor((x1 - x0) / spacing));
    const first = (x0 + x1) / 2 - ((n - 1) * spacing) / 2;
    const farAisle = k < 2 ? TOP_AISLE : 0.755;
    const nearAisle = k < 2 ? 0.755 : 0.955;
    for (let s = 0; s < n; s++) {
      // Far side: the sitter's foot point just over the table's far edge; near side: on the chair.
      seats.push({ x: first + s * spacing, y: y0 + 3 / 240, aisle: farAisle, row: 2 * k, slot: s });
      seats.push({ x: first + s * spacing, y: y1 + 12 / 240, aisle: nearAisle, row: 2 * k + 1, slot: s });
    }
  });
  return seats;
}

interface ScheduleInput {
  seed: number;
  frameRate: number;
  width: number;
  height: number;
  u: number;
  seats: readonly Seat[];
  schedulePeriod: number;
  floorRef: number;
}

/**
 * One hour of visits. Arrivals alternate between busy spells (a group every ~12 s, 1–2.3 min)
 * and quiet spells (1.7–3.3 min, at most one straggler), so the room fills up and empties again;
 * the first visitors are a pair, so every seed shows a merged pair within its first minute.
 */
function buildSchedule(input: ScheduleInput): Visit[] {
  const { seed, frameRate, width, height, u, seats, schedulePeriod, floorRef } = input;
  const rng = random(seed, 0x5c4ed);
  const sec = (s: number) => s * frameRate;
  const seatBusy = new Map<string, Array<[number, number]>>();
  const seatKey = (s: Seat) => `${s.row}:${s.slot}`;
  const isFree = (s: Seat, from: number, to: number) => (seatBusy.get(seatKey(s)) ?? []).every(([a, b]) => to <= a || from >= b);
  const reserve = (s: Seat, from: number, to: number) => {
    const list = seatBusy.get(seatKey(s)) ?? [];
    list.push([from, to]);
    seatBusy.set(seatKey(s), list);
  };

  const visits: Visit[] = [];
  let index = 0;
  const arrive = (t: number) => {
    const pair = index === 0 || rng.chance(0.35);
    const visit = planVisit({ rng, start: t, pair, id: index, seats, isFree, reserve, frameRate, width, height, u, floorRef });
    if (visit.end < schedulePeriod) visits.push(visit);
    index++;
  };
  // Spells: busy (a group every 12 s on average, exponential gaps of at least 1.5 s) and quiet
  // (at most one straggler, in its first half), long enough for the room to empty.
  let spellStart = Math.round(sec(rng.between(2, 5)));
  let busy = true;
  while (spellStart < schedulePeriod) {
    const spellEnd = Math.round(spellStart + sec(busy ? rng.between(60, 140) : rng.between(100, 200)));
    if (busy) {
      for (let t = spellStart; t < spellEnd; t = Math.round(t + Math.max(sec(1.5), -Math.log(1 - rng.uniform()) * sec(12)))) arrive(t);
    } else if (rng.chance(0.35)) {
      arrive(Math.round(spellStart + rng.between(0, 0.5) * (spellEnd - spellStart)));
    }
    spellStart = spellEnd;
    busy = !busy;
  }
  return visits.sort((a, b) => a.start - b.start);
}

interface PlanInput {
  rng: Random;
  start: number;
  pair: boolean;
  id: number;
  seats: readonly Seat[];
  isFree: (s: Seat, from: number, to: number) => boolean;
  reserve: (s: Seat, from: number, to: number) => void;
  frameRate: number;
  width: number;
  height: number;
  u: number;
  floorRef: number;
}

function planVisit(input: PlanInput): Visit {
  const { rng, start, pair, id, seats, isFree, reserve, frameRate, width, height, u, floorRef } = input;
  const sec = (s: number) => s * frameRate;
  const speed = (rng.between(2.4, 3.4) * u * 10) / frameRate; // px per frame (24–34 px/s at 240 rows)
  const legs: Leg[] = [];
  let now = start;
  let at: NormalisedPoint = DOOR;
  const walkTo = (to: NormalisedPoint) => {
    const d = Math.hypot((to[0] - at[0]) * width, (to[1] - at[1]) * height);
    const dt = Math.max(1, Math.round(d / speed));
    legs.push({ t0: now, t1: now + dt, from: at, to, posture: Posture.standing });
    now += dt;
    at = to;
  };
  const stay = (frames: number, posture: Posture) => {
    const dt = Math.max(1, Math.round(frames));
    legs.push({ t0: now, t1: now + dt, from: at, to: at, posture });
    now += dt;
  };
  const entry: NormalisedPoint = [rng.between(0.11, 0.19), rng.between(0.72, 0.88)];
  const exitPoint: NormalisedPoint = [rng.between(0.11, 0.19), rng.between(0.72, 0.88)];
  const stackPoint = (): NormalisedPoint => [rng.between(0.09, 0.91), rng.between(0.41, 0.48)];
  const browse = () => {
    walkTo([0.3, 0.55]);
    walkTo(stackPoint());
    stay(sec(rng.between(5, 30)), Posture.standing);
    walkTo([0.3, 0.55]);
  };

  walkTo(entry);
  if (rng.chance(0.15)) stay(sec(rng.between(1, 4)), Posture.standing); // a look around at the door
  const wantsBooks = rng.chance(0.55);
  const wantsSeat = rng.chance(0.75);
  if (wantsBooks) browse();

  let seated = false;
  if (wantsSeat) {
    // Sitting time: mostly short, now and then long.
    const sit = Math.round(sec(rng.chance(0.75) ? rng.between(15, 60) : rng.between(60, 120)));
    const candidates = shuffle(rng, seats.filter((s) => !pair || seats.some((o) => o.row === s.row && o.slot === s.slot + 1)));
    for (const seat of candidates) {
      const partner = pair ? seats.find((o) => o.row === seat.row && o.slot === seat.slot + 1)! : undefined;
      const x = partner ? (seat.x + partner.x) / 2 : seat.x;
      // Plan the walk to this seat, then check the seat(s) are free for the whole stay.
      const saved = { now, at, n: legs.length };
      walkTo([CORRIDOR_X, seat.aisle]);
      walkTo([x, seat.aisle]);
      walkTo([x, seat.y]);
      const from = now;
      const to = now + sit;
      if (isFree(seat, from - sec(2), to + sec(2)) && (partner === undefined || isFree(partner, from - sec(2), to + sec(2)))) {
        reserve(seat, from - sec(2), to + sec(2));
        if (partner) reserve(partner, from - sec(2), to + sec(2));
        stay(sit, Posture.seated);
        walkTo([x, seat.aisle]);
        walkTo([CORRIDOR_X, seat.aisle]);
        seated = true;
        break;
      }
      now = saved.now;
      at = saved.at;
      legs.length = saved.n;
    }
  }
  if (!seated && !wantsBooks) browse();
  else if (seated && rng.chance(0.2)) {
    walkTo([CORRIDOR_X, TOP_AISLE]);
    browse();
  }
  walkTo(exitPoint);
  walkTo(DOOR);

  const group = `p${id}`;
  const lookOf = () => chooseLook(rng, floorRef);
  const members: Member[] = pair
    ? [
        { id: `${group}a`, dx: (-5 * u) / width, dy: (-1.5 * u) / height, look: lookOf() },
        { id: `${group}b`, dx: (5 * u) / width, dy: (1.5 * u) / height, look: lookOf() },
      ]
    : [{ id: group, dx: 0, dy: 0, look: lookOf() }];
  return { group, start, end: now, legs, members };
}

/** Clothing and hair grey levels; a quarter of visitors are only 12–20 levels off the floor. */
function chooseLook(rng: Random, floorRef: number): Look {
  const near = () => floorRef + (rng.chance(0.5) ? 1 : -1) * rng.between(12, 20);
  if (rng.chance(0.25)) {
    return { shirt: near(), trousers: near(), hair: rng.chance(0.5) ? near() : rng.between(25, 65) };
  }
  let shirt = rng.between(30, 225);
  while (Math.abs(shirt - floorRef) < 25) shirt = rng.between(30, 225);
  const trousers = rng.chance(0.7) ? rng.between(30, 95) : rng.between(140, 200);
  const hair = rng.chance(0.85) ? rng.between(20, 70) : rng.between(140, 190);
  return { shirt, trousers, hair };
}

function shuffle<T>(rng: Random, items: T[]): T[] {
  const a = items.slice();
  for (let i = a.length - 1; i > 0; i--) {
    const j = rng.int(0, i);
    [a[i], a[j]] = [a[j], a[i]];
  }
  return a;
}

// ---------------------------------------------------------------------------------------------
// People

/**
 * Coverage of a pixel centre by one ellipse, with a linear soft edge of SOFT_EDGE px around the
 * contour: the signed distance is approximated by f/|∇f| for f = (dx/rx)² + (dy/ry)² − 1 (first
 * order, exact on the contour), so alpha is ½ on the contour.
 */
function ellipseAlpha(dx: number, dy: number, rx: number, ry: number): number {
  const ax = dx / (rx * rx);
  const ay = dy / (ry * ry);
  const f = dx * ax + dy * ay - 1;
  const g = 2 * Math.sqrt(ax * ax + ay * ay);
  if (g === 0) return 1;
  const alpha = 0.5 - f / g / SOFT_EDGE;
  return alpha <= 0 ? 0 : alpha >= 1 ? 1 : alpha;
}

function drawPerson(img: Float32Array, width: number, height: number, p: DrawnPerson, u: number): void {
  const shape = SHAPE[p.posture];
  const rx = shape.rx * u;
  const ry = shape.ry * u;
  const hr = shape.head * u;
  const fx = p.x * width;
  const fy = p.y * height;
  const bcy = fy - ry; // body centre
  const top = fy - 2 * ry - shape.neck * u - hr; // head centre `neck` above the body's top, head top = box top
  const legLine = bcy + (p.posture === Posture.standing ? 0.15 : 0.45) * ry;
  const { shirt, trousers, hair } = p.member.look;
  const x0 = Math.max(0, Math.floor(fx - rx - SOFT_EDGE));
  const x1 = Math.min(width - 1, Math.ceil(fx + rx + SOFT_EDGE));
  const y0 = Math.max(0, Math.floor(top - SOFT_EDGE));
  const y1 = Math.min(height - 1, Math.ceil(fy + SOFT_EDGE));
  for (let y = y0; y <= y1; y++) {
    const cy = y + 0.5;
    const dyb = cy - bcy;
    const dyh = cy - (top + hr);
    for (let x = x0; x <= x1; x++) {
      const dx = x + 0.5 - fx;
      const ab = ellipseAlpha(dx, dyb, rx, ry);
      const ah = ellipseAlpha(dx, dyh, hr, hr);
      if (ab === 0 && ah === 0) continue;
      const i = y * width + x;
      let v = img[i];
      if (ab > 0) {
        const cloth = (cy > legLine ? trousers : shirt) * (1 - 0.05 * (dyb / ry)); // shoulders a little lighter
        v += (cloth - v) * ab;
      }
      if (ah > 0) v += (hair - v) * ah;
      img[i] = v;
    }
  }
}

/** Area in px of a person shape (half-coverage contour), by 8×8 supersampling. */
function shapeArea(shape: { rx: number; ry: number; head: number; neck: number }, u: number): number {
  const rx = shape.rx * u;
  const ry = shape.ry * u;
  const hr = shape.head * u;
  const top = -2 * ry - shape.neck * u - hr;
  const sub = 8;
  let inside = 0;
  for (let y = Math.floor(top) - 1; y <= 1; y++) {
    for (let x = Math.floor(-rx) - 1; x <= Math.ceil(rx) + 1; x++) {
      for (let sy = 0; sy < sub; sy++) {
        for (let sx = 0; sx < sub; sx++) {
          const px = x + (sx + 0.5) / sub;
          const py = y + (sy + 0.5) / sub;
          const body = (px / rx) ** 2 + ((py + ry) / ry) ** 2 <= 1;
          const head = px ** 2 + (py - top - hr) ** 2 <= hr * hr;
          if (body || head) inside++;
        }
      }
    }
  }
  return inside / (sub * sub);
}
