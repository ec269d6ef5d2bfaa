/**
 * The plaza's walks (plaza.ts): who crosses the square when, generated once from the seed for one
 * schedule period and repeating. Invented data, no real people.
 *
 * Positions live on the ground plane (X across, Z in depth, metres; plazaGeometry.ts) and are
 * projected per frame, so walkers keep a constant ground speed and grow as they come closer.
 *
 * - Parties: single walkers, or (share `groupShare`) groups of 2 (70 %) or 3 side by side, their
 *   centres 0.42–0.52 m apart across the walking direction (the drawn figure is 0.61 m wide, so
 *   neighbours overlap in the image and make one blob) and staggered by up to 0.25 m along it.
 * - Routes: straight lines between two portals — the left or right frame edge (just outside it,
 *   on a foot row from 0.3 to 0.97, nearer rows more often so that the near half sees more than
 *   the few who come from behind the camera), the bottom edge (from behind the camera, entirely
 *   below the frame), or an opening of the façade's arcade at the far edge — in every
 *   combination but a portal with itself, a third of them through a waypoint on the square; so
 *   walkers go left↔right, towards and away from the camera and diagonally. A share `farShare`
 *   walks along the far edge only (feet within rows 0.262–0.31, small people), from side to side
 *   or out of the arcade.
 * - Speeds 1.15–1.6 m/s (a tenth of the singles stroll at 0.7–1.0 m/s; groups 0.95–1.3 m/s).
 * - The stander: about every `standEvery` seconds (the period divided evenly) one person walks to
 *   a spot on the square, stands still there for `standSeconds` and walks off again; the first is
 *   already standing at t = 0.
 * - Steady state: walks are placed on a circle of one schedule period (a walk that starts near
 *   the end of the period carries on at its beginning), so frame 0 already shows people in mid
 *   walk. Walk start times are a renewal process with Gamma(2) gaps (less bunched than Poisson
 *   arrivals), and as many parties are made as give `meanPeople` in view on average. Afterwards,
 *   any frame with nobody standing in the counted square gets a filler walker who reaches the
 *   square in that frame, so the square is never empty.
 */
import type { PlazaGeometry } from './plazaGeometry.ts';
import { personBox, type Look } from './plazaPerson.ts';
import { ARCADE, ARCADE_HALF_WIDTH } from './plazaBackground.ts';
import type { Random } from './random.ts';

type Ground = readonly [number, number]; // X, Z in metres

export interface Member {
  readonly id: string;
  /** Offsets from the party's path: along the walking direction and across it (to its left), metres. */
  readonly along: number;
  readonly across: number;
  /** Size relative to the mean person, 0.93..1.07. */
  readonly scale: number;
  readonly look: Look;
  /** Share of the light left in the darkest part of this person's shadow, 0.6..0.75. */
  readonly shadowLight: number;
}

interface Leg {
  /** Frames from the walk's start, t0 < t1 (t0 = t1 never occurs). */
  readonly t0: number;
  readonly t1: number;
  readonly from: Ground;
  readonly to: Ground;
  /** Unit walking direction (the previous leg's while standing). */
  readonly dir: Ground;
}

export interface Walk {
  readonly id: string;
  /** The group id when the party has more than one member. */
  readonly group?: string;
  /** What made it, for tests and previews. */
  readonly kind: 'walker' | 'far' | 'stander' | 'filler';
  /** First frame in [0, period); the walk runs start, start + 1, …, start + duration − 1 (mod period). */
  start: number;
  readonly duration: number;
  readonly legs: readonly Leg[];
  readonly members: readonly Member[];
}

export interface PlazaScheduleInput {
  rng: Random;
  geometry: PlazaGeometry;
  frameRate: number;
  /** Frames in the schedule. */
  period: number;
  meanPeople: number;
  groupShare: number;
  farShare: number;
  /** Seconds; 0 = nobody stops. */
  standSeconds: number;
  standEvery: number;
  /** Mean paving grey level, for the clothes that blend in. */
  pavingMean: number;
  /** Whether a foot point (normalised) is counted in the square. */
  inSquare: (x: number, y: number) => boolean;
}

/** The walks, sorted by start (see the module comment). */
export function plazaSchedule(input: PlazaScheduleInput): Walk[] {
  const { rng, geometry, frameRate, period, meanPeople, groupShare, farShare, standSeconds, standEvery, pavingMean, inSquare } = input;
  const g = geometry;
  const sec = (s: number) => Math.round(s * frameRate);
  const view = new Int32Array(period);
  const square = new Int32Array(period);
  const walks: Walk[] = [];
  const foot = new Float64Array(6);

  /** Per frame of a walk: people in view and people in the square. */
  const presence = (walk: Walk): { view: Uint8Array; square: Uint8Array } => {
    const v = new Uint8Array(walk.duration);
    const s = new Uint8Array(walk.duration);
    for (let rel = 0; rel < walk.duration; rel++) {
      footPoints(walk, rel, g, foot);
      walk.members.forEach((m, k) => {
        const x = foot[2 * k];
        const y = foot[2 * k + 1];
        const [x0, y0, x1, y1] = personBox(g, x, y, m.scale);
        if (x1 > 0 && x0 < 1 && y1 > 0 && y0 < 1) v[rel]++;
        if (inSquare(x, y)) s[rel]++;
      });
    }
    return { view: v, square: s };
  };
  const place = (walk: Walk, p: { view: Uint8Array; square: Uint8Array }) => {
    for (let rel = 0; rel < walk.duration; rel++) {
      const f = (walk.start + rel) % period;
      view[f] += p.view[rel];
      square[f] += p.square[rel];
    }
    walks.push(walk);
  };

  // Portals: points just outside the view, or an arcade opening at the far edge.
  const margin = 1.3; // m beyond the frame edge: half a figure plus a group's spread
  const sideRow = () => 0.3 + 0.67 * Math.sqrt(rng.uniform()); // rows 0.3–0.97, more of them near
  const side = (left: boolean, row = sideRow()): Ground => {
    const z = g.depthAt(row);
    return [g.lateralAt(left ? 0 : 1, z) + (left ? -margin : margin), z];
  };
  // Below the frame: feet on a row from which even a tall person is hidden, and 20 % nearer.
  const s = 1.1 * g.slope;
  const hiddenRow = (1 - s * g.horizon) / (1 - s);
  const bottom = (): Ground => {
    const z = 0.8 * g.depthAt(hiddenRow);
    return [g.lateralAt(rng.between(0.12, 0.88), z), z];
  };
  const door = (): Ground => {
    const z = 0.99 * g.zFar;
    return [g.lateralAt(rng.pick(ARCADE) + rng.between(-0.5, 0.5) * ARCADE_HALF_WIDTH, z), z];
  };
  const onSquare = (rowLo: number, rowHi: number, colLo: number, colHi: number): Ground => {
    const z = g.depthAt(rng.between(rowLo, rowHi));
    return [g.lateralAt(rng.between(colLo, colHi), z), z];
  };
  type Portal = 'left' | 'right' | 'bottom' | 'door';
  const portals: readonly Portal[] = ['left', 'right', 'bottom', 'door'];
  const weights = [0.3, 0.3, 0.2, 0.2];
  const pickPortal = (not?: Portal): Portal => {
    const total = portals.reduce((a, p, k) => a + (p === not ? 0 : weights[k]), 0);
    let r = rng.uniform() * total;
    for (let k = 0; k < portals.length; k++) {
      if (portals[k] === not) continue;
      r -= weights[k];
      if (r < 0) return portals[k];
    }
    return portals.find((p) => p !== not)!;
  };
  const at = (p: Portal): Ground => (p === 'left' ? side(true) : p === 'right' ? side(false) : p === 'bottom' ? bottom() : door());

  const look = (): Look => chooseLook(rng, pavingMean);
  const member = (id: string, along: number, across: number): Member => ({
    id,
    along,
    across,
    scale: rng.between(0.93, 1.07),
    look: look(),
    shadowLight: rng.between(0.6, 0.75),
  });

  /** Legs through `points` at `speed` m/s, with a stop of `stops[k]` frames at point k. */
  const route = (points: readonly Ground[], speed: number, stops: readonly number[] = []): { legs: Leg[]; duration: number } => {
    const legs: Leg[] = [];
    let now = 0;
    let dir: Ground = [1, 0];
    for (let k = 0; k + 1 < points.length; k++) {
      const [ax, az] = points[k];
      const [bx, bz] = points[k + 1];
      const d = Math.hypot(bx - ax, bz - az);
      if (d > 0) dir = [(bx - ax) / d, (bz - az) / d];
      const dt = Math.max(1, Math.round((d / speed) * frameRate));
      legs.push({ t0: now, t1: now + dt, from: points[k], to: points[k + 1], dir });
      now += dt;
      const stop = stops[k + 1] ?? 0;
      if (stop > 0) {
        legs.push({ t0: now, t1: now + stop, from: points[k + 1], to: points[k + 1], dir });
        now += stop;
      }
    }
    return { legs, duration: now };
  };

  // The stander.
  if (standSeconds > 0) {
    const episodes = Math.max(1, Math.round(period / sec(standEvery)));
    for (let e = 0; e < episodes; e++) {
      const from = at(pickPortal());
      const spot = onSquare(0.45, 0.8, 0.25, 0.75);
      const to = at(pickPortal());
      const speed = rng.between(1.1, 1.4);
      const { legs, duration } = route([from, spot, to], speed, [0, sec(standSeconds)]);
      const walkIn = legs[0].t1;
      // The first is standing for 30 s at t = 0; the others follow every period / episodes frames.
      const start = mod(Math.round((e * period) / episodes) - walkIn - sec(30), period);
      const walk: Walk = { id: `s${e}`, kind: 'stander', start, duration, legs, members: [member(`s${e}`, 0, 0)] };
      place(walk, presence(walk));
    }
  }

  // Parties, until their time in view adds up to the mean wanted.
  const planParty = (id: string, kind: 'walker' | 'far' | 'filler', size: number): Walk => {
    const points: Ground[] = [];
    if (kind === 'far') {
      const row = () => rng.between(0.262, 0.31);
      const leftToRight = rng.chance(0.5);
      points.push(rng.chance(0.25) ? door() : side(leftToRight, row()), side(!leftToRight, row()));
    } else if (kind === 'filler') {
      const leftToRight = rng.chance(0.5);
      points.push(side(leftToRight, rng.between(0.35, 0.9)), side(!leftToRight, rng.between(0.35, 0.9)));
    } else {
      const a = pickPortal();
      const b = pickPortal(a);
      points.push(at(a));
      if (rng.chance(1 / 3)) points.push(onSquare(0.35, 0.9, 0.15, 0.85));
      points.push(at(b));
    }
    const speed = size > 1 ? rng.between(0.95, 1.3) : rng.chance(0.1) ? rng.between(0.7, 1.0) : rng.between(1.15, 1.6);
    const { legs, duration } = route(points, speed);
    const gap = () => rng.between(0.42, 0.52);
    const stagger = () => rng.between(-0.25, 0.25);
    let members: Member[];
    if (size === 1) members = [member(id, 0, 0)];
    else if (size === 2) {
      const half = gap() / 2;
      const lag = stagger() / 2;
      members = [member(`${id}a`, lag, half), member(`${id}b`, -lag, -half)];
    } else {
      members = [member(`${id}a`, stagger() / 2, gap()), member(`${id}b`, stagger() / 2, 0), member(`${id}c`, stagger() / 2, -gap())];
    }
    return { id, group: size > 1 ? id : undefined, kind, start: 0, duration, legs, members };
  };

  let target = meanPeople * period - view.reduce((a, v) => a + v, 0);
  const parties: Array<{ walk: Walk; p: { view: Uint8Array; square: Uint8Array } }> = [];
  for (let i = 0; target > 0; i++) {
    const far = rng.chance(farShare);
    const size = rng.chance(groupShare) ? (rng.chance(0.7) ? 2 : 3) : 1;
    const walk = planParty(`w${i}`, far ? 'far' : 'walker', size);
    const p = presence(walk);
    parties.push({ walk, p });
    target -= p.view.reduce((a, v) => a + v, 0);
  }
  // Gamma(2) gaps (the sum of two exponentials), scaled to fill the period exactly.
  const gaps = parties.map(() => -Math.log(1 - rng.uniform()) - Math.log(1 - rng.uniform()));
  const total = gaps.reduce((a, v) => a + v, 0);
  let clock = rng.uniform() * period;
  parties.forEach(({ walk, p }, k) => {
    walk.start = Math.floor(clock) % period;
    clock += (gaps[k] / total) * period;
    place(walk, p);
  });

  // Nobody in the square: a filler walker reaches it in that frame.
  for (let f = 0, k = 0; f < period; f++) {
    while (square[f] === 0) {
      const walk = planParty(`f${k++}`, 'filler', 1);
      const p = presence(walk);
      const enters = p.square.indexOf(1);
      if (enters < 0) continue;
      walk.start = mod(f - enters, period);
      place(walk, p);
    }
  }
  return walks.sort((a, b) => a.start - b.start);
}

/**
 * Writes the foot points (normalised x, y) of the walk's members `rel` frames after its start
 * into out[2k], out[2k + 1].
 */
export function footPoints(walk: Walk, rel: number, geometry: PlazaGeometry, out: Float64Array): void {
  const legs = walk.legs;
  let leg = legs[legs.length - 1];
  for (let k = 0; k < legs.length; k++) {
    if (rel < legs[k].t1) {
      leg = legs[k];
      break;
    }
  }
  const s = Math.min(1, Math.max(0, (rel - leg.t0) / (leg.t1 - leg.t0)));
  const cx = leg.from[0] + (leg.to[0] - leg.from[0]) * s;
  const cz = leg.from[1] + (leg.to[1] - leg.from[1]) * s;
  const [dx, dz] = leg.dir;
  const zMax = 0.995 * geometry.zFar;
  walk.members.forEach((m, k) => {
    // Across = to the walker's left: the direction turned by +90° in the ground's (X, Z) plane.
    const X = cx + m.along * dx - m.across * dz;
    const Z = Math.min(zMax, Math.max(0.2, cz + m.along * dz + m.across * dx));
    out[2 * k] = geometry.columnAt(X, Z);
    out[2 * k + 1] = geometry.rowAt(Z);
  });
}

/** Clothing and hair grey levels; a quarter of the people are only 12–20 levels off the paving. */
function chooseLook(rng: Random, pavingMean: number): Look {
  const near = () => pavingMean + (rng.chance(0.5) ? 1 : -1) * rng.between(12, 20);
  if (rng.chance(0.25)) {
    return { shirt: near(), trousers: near(), hair: rng.chance(0.5) ? near() : rng.between(25, 65) };
  }
  let shirt = rng.between(30, 230);
  while (Math.abs(shirt - pavingMean) < 25) shirt = rng.between(30, 230);
  const trousers = rng.chance(0.7) ? rng.between(30, 95) : rng.between(175, 215);
  const hair = rng.chance(0.85) ? rng.between(20, 70) : rng.between(150, 200);
  return { shirt, trousers, hair };
}

function mod(a: number, n: number): number {
  return ((a % n) + n) % n;
}
