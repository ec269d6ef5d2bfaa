/**
 * Synthetic scene: the library reading room (readingRoom.ts) in colour, with every visitor
 * casting a soft shadow on the floor. Invented data, no real people.
 *
 * The light comes from high up at the back left, so each shadow is an ellipse on the floor that
 * starts under the feet and points to the lower right (towards the camera), darkest at the feet
 * (a seeded share 0.55–0.75 of the light left, per person) and fading towards its tip, with a
 * penumbra of 3 px (at 240 rows) around it. A shadow darkens what it falls on and keeps its
 * chromaticity: it multiplies the grey level, and the colour is the same tint at the darker
 * level. Shadows fall on the background only, never on a person (the person stands in front).
 *
 * The grey frames are the reading room's (same seed: same visits, lighting and sensor noise),
 * darkened where the shadows fall; the colour frames are those grey frames colourised
 * (colourise.ts) with a tint per pixel: a cream wall, books of many colours, a blue-grey carpet,
 * a red rug under the tables, a brown doormat, and clothes of seeded colours — a fifth of the
 * visitors wear the carpet's own colour, the hard case for any colour test — plus colour noise of
 * the sensor's level that leaves the grey alone.
 *
 * Truth: counts per zone as the reading room (shadows change no count), and per pixel CDnet
 * labels from a noise-free rendering (Goyette et al. 2012: 255 moving, 50 shadow, 0 static):
 * 255 where the people change the empty scene by more than 4 grey levels, 50 where a shadow
 * darkens it by more than 4 levels, 0 elsewhere. Shadow pixels are background for the CDnet
 * metrics, so any detected there is a false positive.
 */
import type { GreyFrame } from '../../domain/frame.ts';
import { createColourFrame, type ColourFrame } from '../../domain/colourFrame.ts';
import { colourise, LUMA } from './colourise.ts';
import { random } from './random.ts';
import { createReadingRoom, type ReadingRoomOptions } from './readingRoom.ts';
import { assertFrameIndex, outputFrame, Posture, type SceneObject, type SceneTruth, type SyntheticScene } from './scene.ts';
import { texture } from './texture.ts';

export type ShadowRoomOptions = ReadingRoomOptions;

/** One frame of the shadow room in grey and colour, with its truth. */
export interface ShadowRoomFrame {
  /** The grey frame, shadows included (what the subspace counts). */
  readonly frame: GreyFrame;
  /** The colour frame of the same picture; its grey is `frame` to within one level. */
  readonly colour: ColourFrame;
  /** People per zone, as the reading room. */
  readonly truth: SceneTruth;
  /** CDnet labels per pixel, row-major: 255 person, 50 shadow, 0 static background. */
  readonly labels: Uint8Array;
}

export interface ShadowRoomScene extends SyntheticScene {
  /** Length of the visit schedule in frames (the reading room's). */
  readonly schedulePeriod: number;
  /** Frame t in grey and colour, with counts and pixel labels. */
  colourFrameAt(t: number): ShadowRoomFrame;
  /** An empty-scene frame t in grey and colour (noise independent of colourFrameAt(t)'s). */
  emptyColourFrameAt(t: number): { frame: GreyFrame; colour: ColourFrame };
}

const LIGHT_LEFT: readonly [number, number] = [0.55, 0.75]; // share of light at a shadow's darkest point
const SHADOW_DIRECTION = (25 * Math.PI) / 180; // below the horizontal, pointing right
const PENUMBRA = 3; // px at 240 rows
const WALL_BOTTOM = 0.34; // where the reading room's floor begins (normalised y)
const CARPET: readonly [number, number, number] = [0.72, 0.92, 1];
const CHANGED = 4; // grey levels: the label threshold of the truth masks
const COLOUR_NOISE_STREAM = 0x5c01;

/**
 * Builds the shadow room with the reading room's options (see the module comment).
 *
 * Example: createShadowRoom().colourFrameAt(300).labels has 255s on the visitors and 50s on
 * their shadows; .truth is the reading room's { entrance: { count: 2 }, stacks: { count: 2 },
 * tables: { count: 4 } }.
 */
export function createShadowRoom(options: ShadowRoomOptions = {}): ShadowRoomScene {
  const base = createReadingRoom(options);
  const clean = createReadingRoom({ ...options, noise: 0 });
  const { width, height } = base;
  const seed = options.seed ?? 1;
  const noiseLevel = options.noise ?? 2.5;
  const d = width * height;
  const u = height / 240;
  const background = backgroundTints(width, height, seed);

  const people = clean.emptyFrameAt(0); // buffers, overwritten per frame
  const empty = clean.emptyFrameAt(0);
  const light = new Float32Array(d);
  const owner = new Int32Array(d);
  const tint = new Float32Array(3 * d);
  const noise = new Float32Array(2 * d);

  /** Shadows and ownership of frame t: fills light (1 = unshadowed) and owner (−1 = background). */
  const layout = (t: number): readonly SceneObject[] => {
    clean.frameAt(t, people);
    clean.emptyFrameAt(t, empty);
    const objects = base.objectsAt(t);
    light.fill(1);
    owner.fill(-1);
    const p = people.data;
    const e = empty.data;
    objects.forEach((object, k) => {
      const [x0, y0, x1, y1] = object.box;
      const xa = Math.max(0, Math.floor(x0 * width) - 2);
      const xb = Math.min(width, Math.ceil(x1 * width) + 2);
      const ya = Math.max(0, Math.floor(y0 * height) - 2);
      const yb = Math.min(height, Math.ceil(y1 * height) + 2);
      // Drawing order is back to front, so the last owner of a pixel is the one in front.
      for (let y = ya; y < yb; y++) for (let x = xa; x < xb; x++) if (p[y * width + x] !== e[y * width + x]) owner[y * width + x] = k;
    });
    for (const object of objects) castShadow(object, width, height, u, seed, light, p, e);
    return objects;
  };

  const render = (t: number, out?: GreyFrame): { frame: GreyFrame; truth: SceneTruth; objects: readonly SceneObject[] } => {
    const frame = outputFrame(width, height, out);
    const { truth } = base.frameAt(t, frame);
    const objects = layout(t);
    const g = frame.data;
    for (let i = 0; i < d; i++) if (light[i] < 1) g[i] = Math.round(g[i] * light[i]);
    return { frame, truth, objects };
  };

  const colourOf = (frame: GreyFrame, t: number, stream: number, objects: readonly SceneObject[]): ColourFrame => {
    tint.set(background);
    if (objects.length > 0) {
      const looks = objects.map((o) => lookOf(o, seed));
      for (let y = 0; y < height; y++) {
        for (let x = 0; x < width; x++) {
          const i = y * width + x;
          const k = owner[i];
          if (k < 0) continue;
          const [, y0, , y1] = objects[k].box;
          const top = y0 * height;
          const h = (y1 - y0) * height;
          const look = looks[k];
          const part = y + 0.5 < top + 9 * u ? look.hair : y + 0.5 < top + (objects[k].posture === Posture.seated ? 0.75 : 0.55) * h ? look.shirt : look.trousers;
          tint[3 * i] = part[0];
          tint[3 * i + 1] = part[1];
          tint[3 * i + 2] = part[2];
        }
      }
    }
    random(seed, t, stream).normals(noise, 1);
    return colourise(frame, tint, { noise, noiseLevel, out: createColourFrame(width, height) });
  };

  return {
    id: 'shadow-room',
    name: 'Library reading room with shadows',
    width,
    height,
    zones: base.zones,
    frameRate: base.frameRate,
    lightingPeriod: base.lightingPeriod,
    lamp: base.lamp,
    schedulePeriod: base.schedulePeriod,
    emptyFrameAt: (t, out) => base.emptyFrameAt(t, out),
    frameAt(t, out) {
      assertFrameIndex(t);
      const { frame, truth } = render(t, out);
      return { frame, truth };
    },
    objectsAt: (t) => base.objectsAt(t),
    colourFrameAt(t) {
      assertFrameIndex(t);
      const { frame, truth, objects } = render(t);
      const labels = new Uint8Array(d);
      const p = people.data;
      const e = empty.data;
      for (let i = 0; i < d; i++) {
        if (Math.abs(p[i] - e[i]) > CHANGED) labels[i] = 255;
        else if (light[i] < 1 && (1 - light[i]) * e[i] > CHANGED) labels[i] = 50;
      }
      return { frame, colour: colourOf(frame, t, COLOUR_NOISE_STREAM, objects), truth, labels };
    },
    emptyColourFrameAt(t) {
      assertFrameIndex(t);
      const frame = base.emptyFrameAt(t);
      return { frame, colour: colourOf(frame, t, COLOUR_NOISE_STREAM + 1, []) };
    },
  };
}

/**
 * Darkens `light` under the shadow of one person (see the module comment), on pixels where no
 * person is drawn (`people` equals `empty` there). Overlapping shadows of one light take the
 * darker value, not the product.
 */
function castShadow(
  object: SceneObject,
  width: number,
  height: number,
  u: number,
  seed: number,
  light: Float32Array,
  people: Float32Array,
  empty: Float32Array,
): void {
  const [x0, y0, x1, y1] = object.box;
  const h = (y1 - y0) * height;
  const w = (x1 - x0) * width;
  const fx = object.anchor[0] * width;
  const fy = object.anchor[1] * height;
  const major = (object.posture === Posture.seated ? 0.5 : 0.42) * h;
  const minor = 0.45 * w;
  const cos = Math.cos(SHADOW_DIRECTION);
  const sin = Math.sin(SHADOW_DIRECTION);
  const cx = fx + 0.8 * major * cos;
  const cy = fy + 0.8 * major * sin;
  const rng = random(seed, 0x5ad0, hashId(object.id));
  const depth = 1 - rng.between(LIGHT_LEFT[0], LIGHT_LEFT[1]);
  const soft = PENUMBRA * u;
  const reach = major + soft;
  const xa = Math.max(0, Math.floor(cx - reach));
  const xb = Math.min(width - 1, Math.ceil(cx + reach));
  const ya = Math.max(Math.ceil(WALL_BOTTOM * height), Math.floor(cy - reach));
  const yb = Math.min(height - 1, Math.ceil(cy + reach));
  for (let y = ya; y <= yb; y++) {
    for (let x = xa; x <= xb; x++) {
      const i = y * width + x;
      if (people[i] !== empty[i]) continue;
      const dx = x + 0.5 - cx;
      const dy = y + 0.5 - cy;
      const a = dx * cos + dy * sin; // along the shadow
      const b = -dx * sin + dy * cos; // across it
      // Soft edge: signed distance to the contour ≈ f / |∇f| for f = (a/A)² + (b/B)² − 1.
      const ga = a / (major * major);
      const gb = b / (minor * minor);
      const f = a * ga + b * gb - 1;
      const grad = 2 * Math.sqrt(ga * ga + gb * gb);
      const coverage = grad === 0 ? 1 : Math.min(1, Math.max(0, 0.5 - f / grad / soft));
      if (coverage === 0) continue;
      const along = Math.min(1, Math.max(0, 0.5 + 0.5 * (a / major))); // 0 at the feet, 1 at the tip
      const value = 1 - depth * (1 - 0.45 * along) * coverage;
      if (value < light[i]) light[i] = value;
    }
  }
}

/** Tints (luminance 1) of one person's hair, shirt and trousers, from the person's id. */
function lookOf(object: SceneObject, seed: number): { hair: Tint; shirt: Tint; trousers: Tint } {
  const rng = random(seed, 0xc010, hashId(object.id));
  const hue = () => tintOf(hsv(rng.uniform(), 1), rng.between(0.25, 0.7));
  const camouflaged = rng.chance(0.2);
  const shirt = camouflaged ? tintOf(CARPET, 0.6) : hue();
  const trousers = camouflaged ? tintOf(CARPET, 0.6) : rng.chance(0.5) ? tintOf([0.35, 0.45, 0.9], rng.between(0.2, 0.5)) : hue();
  const hair = tintOf([0.9, 0.6, 0.35], rng.between(0, 0.5));
  return { hair, shirt, trousers };
}

type Tint = readonly [number, number, number];

/** Per-pixel tints of the empty room: wall, books, carpet, rug, doormat (normalised x right, y down). */
function backgroundTints(width: number, height: number, seed: number): Float32Array {
  const u = height / 240;
  const out = new Float32Array(3 * width * height);
  const texR = texture({ width, height }, { seed: seed + 11, cellX: 30 * u, cellY: 30 * u, octaves: 2 });
  const texB = texture({ width, height }, { seed: seed + 12, cellX: 30 * u, cellY: 30 * u, octaves: 2 });
  const books = random(seed, 0xb00c);
  const spine = Math.max(2, Math.round(4 * u));
  const columns = Math.ceil(width / spine);
  const bookTints = Array.from({ length: 4 * columns }, () => tintOf(hsv(books.uniform(), 1), books.between(0.2, 0.7)));
  const wall = tintOf([1, 0.93, 0.8], 0.6);
  const rug = tintOf([1, 0.66, 0.58], 0.7);
  const mat = tintOf([0.9, 0.75, 0.55], 0.6);
  for (let y = 0; y < height; y++) {
    const ny = (y + 0.5) / height;
    for (let x = 0; x < width; x++) {
      const nx = (x + 0.5) / width;
      const i = y * width + x;
      let k: Tint;
      if (ny < WALL_BOTTOM) {
        const shelfRow = Math.floor((ny - 0.05) / ((WALL_BOTTOM - 0.06) / 4));
        k = ny >= 0.05 && shelfRow >= 0 && shelfRow < 4 && nx > 0.03 && nx < 0.97 ? bookTints[shelfRow * columns + Math.floor(x / spine)] : wall;
      } else if (nx >= 0.35 && nx < 0.95 && ny >= 0.55 && ny < 0.96) k = rug;
      else if (nx < 0.1 && ny >= 0.71 && ny < 0.89) k = mat;
      else k = tintOf([CARPET[0] + 0.05 * texR[i], CARPET[1], CARPET[2] + 0.05 * texB[i]], 0.6);
      out[3 * i] = k[0];
      out[3 * i + 1] = k[1];
      out[3 * i + 2] = k[2];
    }
  }
  return out;
}

/** A tint of luminance 1 towards the colour c (linear R, G, B > 0) with saturation s (0 = neutral grey, 1 = c itself). */
function tintOf(c: readonly [number, number, number], s: number): Tint {
  const l = LUMA[0] * c[0] + LUMA[1] * c[1] + LUMA[2] * c[2];
  return [1 + s * (c[0] / l - 1), 1 + s * (c[1] / l - 1), 1 + s * (c[2] / l - 1)];
}

/** A colour of hue h (0..1) and saturation s at full value, linear R, G, B in 0.15..1. */
function hsv(h: number, s: number): [number, number, number] {
  const f = (n: number) => {
    const k = (n + h * 6) % 6;
    return 1 - s * 0.85 * Math.max(0, Math.min(k, 4 - k, 1));
  };
  return [f(5), f(3), f(1)];
}

/** FNV-1a hash of an id (32-bit), for per-person seeded draws. */
function hashId(id: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < id.length; i++) h = Math.imul(h ^ id.charCodeAt(i), 0x01000193);
  return h >>> 0;
}
