/**
 * The empty plaza (plaza.ts) as a grey albedo image: a building façade across the top and stone
 * paving below, drawn through the plaza's camera (plazaGeometry.ts). Invented data.
 *
 * - Façade (rows 0 .. pavingTop): a rendered wall in shade with two floors of windows (dark glass,
 *   a lighter frame and sill, some with blinds), a string course with its shadow line, and an
 *   arcade of dark arched openings on the ground floor ({@link ARCADE}), where walkers come out
 *   of and go into the building, above a plinth.
 * - Paving (pavingTop .. 1): sunlit slabs 1.0 m × 0.6 m in running bond, laid on the ground plane,
 *   so their joints converge towards the vanishing point and the rows crowd towards the far edge;
 *   each slab has its own tone, the stone a fine texture, and the far paving is a little lighter
 *   (haze). The joints are anti-aliased by the share of the pixel's ground footprint they cover,
 *   so far joints fade instead of flickering. A band of darker stone crosses the square, and a
 *   ring of darker stone is set into it.
 * - Vignetting: 1 − 0.2·r² (r relative to the half-diagonal).
 */
import type { PlazaGeometry } from './plazaGeometry.ts';
import { random } from './random.ts';
import { texture } from './texture.ts';

/** Centres (normalised x) of the arcade's openings; their half width is ARCADE_HALF_WIDTH. */
export const ARCADE: readonly number[] = [0.1, 0.3, 0.5, 0.7, 0.9];
export const ARCADE_HALF_WIDTH = 0.045;

const SLAB_W = 1.0; // m, across
const SLAB_D = 0.6; // m, in depth
const JOINT = 0.035; // m
const BAND: readonly [number, number] = [14, 14.6]; // m of depth: the band of darker stone
const RING = { x: 2.5, z: 19, radius: 2.6, width: 0.35 } as const; // m

export interface PlazaBackground {
  /** Albedo image, width × height, row-major. */
  readonly albedo: Float32Array;
  /** Mean grey level of the paving (before lighting). */
  readonly pavingMean: number;
}

/** Paints the empty plaza for `geometry` (see the module comment). */
export function plazaBackground(geometry: PlazaGeometry, seed: number): PlazaBackground {
  const { width, height, pavingTop } = geometry;
  const u = height / 240;
  const img = new Float32Array(width * height);
  const wallTex = texture({ width, height }, { seed: seed + 21, cellX: 30 * u, cellY: 30 * u, octaves: 3 });
  const stoneTex = texture({ width, height }, { seed: seed + 22, cellX: 3 * u, cellY: 2 * u, octaves: 2 });
  const stainTex = texture({ width, height }, { seed: seed + 23, cellX: 50 * u, cellY: 25 * u, octaves: 2 });
  const topRow = Math.round(pavingTop * height);

  // Façade.
  const rng = random(seed, 0xfa5ade);
  for (let y = 0; y < topRow; y++) {
    const ny = (y + 0.5) / height;
    for (let x = 0; x < width; x++) img[y * width + x] = 118 - 10 * (ny / pavingTop) + 5 * wallTex[y * width + x];
  }
  const px = (v: number) => v * width;
  const py = (v: number) => v * height;
  const fill = (x0: number, y0: number, x1: number, y1: number, value: (x: number, y: number) => number) => {
    const xa = Math.max(0, Math.round(x0));
    const xb = Math.min(width, Math.round(x1));
    const ya = Math.max(0, Math.round(y0));
    const yb = Math.min(topRow, Math.round(y1));
    for (let y = ya; y < yb; y++) for (let x = xa; x < xb; x++) img[y * width + x] = value(x, y);
  };
  const border = Math.max(1, Math.round(u));
  for (const [wy0, wy1] of [[0.012, 0.068], [0.088, 0.142]] as const) {
    for (let bay = 0; bay < 10; bay++) {
      const cx = 0.05 + 0.1 * bay;
      const x0 = px(cx - 0.024);
      const x1 = px(cx + 0.024);
      const y0 = py(wy0);
      const y1 = py(wy1);
      fill(x0 - border, y0 - border, x1 + border, y1 + border, () => 150); // frame
      const blind = rng.chance(0.25) ? rng.between(0.3, 0.8) : 0; // share of the window covered by a blind
      const glass = rng.between(52, 72);
      fill(x0, y0, x1, y1, (x, y) => {
        const sy = (y + 0.5 - y0) / (y1 - y0);
        if (sy < blind) return 128 - 6 * Math.sin(sy * 40);
        const sx = (x + 0.5 - x0) / (x1 - x0);
        return glass + 16 * Math.max(0, 1 - Math.abs(sx + sy - 0.9) * 3); // a diagonal reflection
      });
      fill(x0 - 2 * border, y1 + border, x1 + 2 * border, y1 + 3 * border, () => 146); // sill
      fill(x0 - 2 * border, y1 + 3 * border, x1 + 2 * border, y1 + 4 * border, () => 88); // its shadow
      fill((cx + 0.045) * width, y0, (cx + 0.045) * width + border, y1, (x, y) => 104 + 3 * wallTex[y * width + x]); // pilaster edge
    }
  }
  fill(0, py(0.148), width, py(0.158), (x, y) => 140 + 3 * wallTex[y * width + x]); // string course
  fill(0, py(0.158), width, py(0.163), () => 82); // its shadow
  for (const cx of ARCADE) {
    const x0 = px(cx - ARCADE_HALF_WIDTH);
    const x1 = px(cx + ARCADE_HALF_WIDTH);
    const top = py(0.176);
    const spring = py(0.198); // where the arch meets the jambs
    const bottom = py(pavingTop);
    const rx = (x1 - x0) / 2;
    const ry = spring - top;
    fill(x0 - border, top - border, x1 + border, bottom, (x, y) => {
      const dx = (x + 0.5 - (x0 + x1) / 2) / (rx + border);
      const dy = (y + 0.5 - spring) / (ry + border);
      if (y + 0.5 < spring && dx * dx + dy * dy > 1) return img[y * width + x];
      const ix = (x + 0.5 - (x0 + x1) / 2) / rx;
      const iy = (y + 0.5 - spring) / ry;
      const opening = x + 0.5 >= x0 && x + 0.5 < x1 && (y + 0.5 >= spring || ix * ix + iy * iy <= 1);
      if (!opening) return 146; // the arch's lit stone rim
      return 34 + 10 * ((y + 0.5 - top) / (bottom - top)); // dark interior, floor a little lighter
    });
  }
  fill(0, py(pavingTop - 0.007), width, py(pavingTop), (x, y) => {
    const nx = (x + 0.5) / width;
    const inDoor = ARCADE.some((c) => Math.abs(nx - c) < ARCADE_HALF_WIDTH);
    return inDoor ? img[y * width + x] : 92 + 3 * wallTex[y * width + x];
  });

  // Paving.
  const { depthAt, lateralAt, depthScale, zNear, zFar } = geometry;
  let sum = 0;
  let n = 0;
  for (let y = topRow; y < height; y++) {
    const ny = (y + 0.5) / height;
    const z = depthAt(ny);
    const footZ = (z * z) / (depthScale * height); // metres of depth one pixel row spans
    const footX = z / (geometry.lateralScale * width); // metres across one pixel column spans
    const haze = (z - zNear) / (zFar - zNear);
    const row = Math.floor(z / SLAB_D);
    const offset = row % 2 === 0 ? 0 : SLAB_W / 2;
    const jz = jointCover(z, SLAB_D, footZ);
    const inBand = z >= BAND[0] && z < BAND[1];
    for (let x = 0; x < width; x++) {
      const i = y * width + x;
      const gx = lateralAt((x + 0.5) / width, z);
      const col = Math.floor((gx + offset) / SLAB_W);
      const tone = 6 * (hash01(seed, col, row) - 0.5) * 2;
      const jx = jointCover(gx + offset, SLAB_W, footX);
      const ring = Math.abs(Math.hypot(gx - RING.x, z - RING.z) - RING.radius) < RING.width / 2;
      let v = 148 + 12 * haze + tone * (1 - 0.5 * haze) + 4 * stoneTex[i] * (1 - 0.6 * haze) + 4 * stainTex[i];
      if (inBand || ring) v -= 26;
      v -= 42 * (1 - 0.5 * haze) * Math.max(jz, inBand ? 0 : jx);
      img[i] = v;
      sum += v;
      n++;
    }
  }

  // Vignetting.
  for (let y = 0; y < height; y++) {
    const dy = (y + 0.5) / height - 0.5;
    for (let x = 0; x < width; x++) {
      const dx = (x + 0.5) / width - 0.5;
      img[y * width + x] *= 1 - 0.4 * (dx * dx + dy * dy);
    }
  }
  return { albedo: img, pavingMean: sum / n };
}

/**
 * Share of a pixel's footprint [p − f/2, p + f/2] (metres) covered by the joints of width JOINT
 * centred on the multiples of `spacing`.
 */
function jointCover(p: number, spacing: number, f: number): number {
  const r = p - spacing * Math.round(p / spacing); // offset from the nearest joint
  const lo = Math.max(-JOINT / 2, r - f / 2);
  const hi = Math.min(JOINT / 2, r + f / 2);
  return hi > lo ? Math.min(1, (hi - lo) / f) : 0;
}

/** A uniform number in [0, 1) from (seed, i, j), for the slab tones. */
function hash01(seed: number, i: number, j: number): number {
  let h = Math.imul(seed ^ 0x27d4eb2d, 0x9e3779b1) ^ Math.imul(i, 0x85ebca6b) ^ Math.imul(j, 0xc2b2ae35);
  h ^= h >>> 16;
  h = Math.imul(h, 0x7feb352d);
  h ^= h >>> 15;
  h = Math.imul(h, 0x846ca68b);
  h ^= h >>> 16;
  return (h >>> 0) / 4294967296;
}
