/**
 * Checks of our own synthetic scenario (invented rooms, people and boxes). Most expected values
 * come from the scenario's own definition — what it promises to draw and to count — so no outside
 * source is needed for them; the truth is recounted here with independent code (a winding-number
 * point-in-polygon test and a per-pixel zone raster written in this file). Facts taken from
 * outside are marked with `check:`.
 */
import { describe, expect, it } from 'vitest';
import type { GreyFrame } from '../../src/domain/frame.ts';
import type { NormalisedPoint, Zone } from '../../src/domain/zone.ts';
import { validateZones } from '../../src/counting/parseZones.ts';
import {
  createReadingRoom,
  createScene,
  createStockRoom,
  random,
  sceneIds,
  syntheticFrames,
  type SceneObject,
  type SyntheticScene,
} from '../../src/frames/synthetic/index.ts';

const SPAN = 4000; // frames of scene time the scenario checks look at (400 s at 10 fps)

/** Winding number of a closed polygon around (x, y), by signed crossings (Sunday 2001); ≠ 0 inside. */
function winding(x: number, y: number, polygon: readonly NormalisedPoint[]): number {
  let w = 0;
  for (let i = 0; i < polygon.length; i++) {
    const [x0, y0] = polygon[i];
    const [x1, y1] = polygon[(i + 1) % polygon.length];
    const side = (x1 - x0) * (y - y0) - (x - x0) * (y1 - y0);
    if (y0 <= y && y1 > y && side > 0) w++;
    else if (y0 > y && y1 <= y && side < 0) w--;
  }
  return w;
}
const inside = (p: NormalisedPoint, polygon: readonly NormalisedPoint[]) => winding(p[0], p[1], polygon) !== 0;

/** Pixels whose centre lies inside the zone polygon, by testing every pixel centre. */
function zoneRaster(zone: Zone, width: number, height: number): Uint8Array {
  const mask = new Uint8Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) mask[y * width + x] = inside([(x + 0.5) / width, (y + 0.5) / height], zone.polygon) ? 1 : 0;
  }
  return mask;
}

/** Pixel bounds [x0, y0, x1) × [y1) of a normalised box, expanded by `margin` px, clipped to the frame. */
function pixelBox(box: readonly number[], width: number, height: number, margin = 0): [number, number, number, number] {
  return [
    Math.max(0, Math.floor(box[0] * width - margin)),
    Math.max(0, Math.floor(box[1] * height - margin)),
    Math.min(width, Math.ceil(box[2] * width + margin)),
    Math.min(height, Math.ceil(box[3] * height + margin)),
  ];
}

const fullyInFrame = (o: SceneObject) => o.box[0] >= 0 && o.box[1] >= 0 && o.box[2] <= 1 && o.box[3] <= 1;
const inFrame = (o: SceneObject) => o.box[2] > 0 && o.box[0] < 1 && o.box[3] > 0 && o.box[1] < 1;

function boxOverlap(a: SceneObject, b: SceneObject): number {
  const ix = Math.min(a.box[2], b.box[2]) - Math.max(a.box[0], b.box[0]);
  const iy = Math.min(a.box[3], b.box[3]) - Math.max(a.box[1], b.box[1]);
  if (ix <= 0 || iy <= 0) return 0;
  const area = (o: SceneObject) => (o.box[2] - o.box[0]) * (o.box[3] - o.box[1]);
  return (ix * iy) / Math.min(area(a), area(b));
}

function sameData(a: GreyFrame, b: GreyFrame): boolean {
  if (a.data.length !== b.data.length) return false;
  for (let i = 0; i < a.data.length; i++) if (a.data[i] !== b.data[i]) return false;
  return true;
}

/** 4-connected components of the set pixels inside a pixel rectangle; returns their sizes. */
function componentSizes(mask: Uint8Array, width: number, rect: [number, number, number, number]): number[] {
  const [x0, y0, x1, y1] = rect;
  const seen = new Uint8Array(mask.length);
  const sizes: number[] = [];
  for (let y = y0; y < y1; y++) {
    for (let x = x0; x < x1; x++) {
      const start = y * width + x;
      if (!mask[start] || seen[start]) continue;
      let size = 0;
      const stack = [start];
      seen[start] = 1;
      while (stack.length > 0) {
        const i = stack.pop()!;
        size++;
        const px = i % width;
        const py = (i - px) / width;
        for (const [nx, ny] of [[px - 1, py], [px + 1, py], [px, py - 1], [px, py + 1]]) {
          if (nx < x0 || nx >= x1 || ny < y0 || ny >= y1) continue;
          const j = ny * width + nx;
          if (mask[j] && !seen[j]) {
            seen[j] = 1;
            stack.push(j);
          }
        }
      }
      sizes.push(size);
    }
  }
  return sizes;
}

/** Mask of pixels where the populated frame differs from the empty one (meaningful with noise 0). */
function diffMask(scene: SyntheticScene, t: number): Uint8Array {
  const full = scene.frameAt(t).frame.data;
  const empty = scene.emptyFrameAt(t).data;
  const mask = new Uint8Array(full.length);
  for (let i = 0; i < full.length; i++) mask[i] = full[i] !== empty[i] ? 1 : 0;
  return mask;
}

describe('random', () => {
  it('is deterministic per (seed, keys), and seeds, keys and key order all matter', () => {
    const draw = (seed: number, ...keys: number[]) => {
      const r = random(seed, ...keys);
      return Array.from({ length: 8 }, () => r.uniform());
    };
    expect(draw(7, 3)).toEqual(draw(7, 3));
    expect(draw(7, 3)).not.toEqual(draw(8, 3));
    expect(draw(7, 3)).not.toEqual(draw(7, 4));
    expect(draw(7, 1, 2)).not.toEqual(draw(7, 2, 1));
    expect(() => random(1.5)).toThrow(/seed/);
    expect(() => random(1, 0.5)).toThrow(/keys\[0\]/);
  });

  it('draws uniforms in [0, 1) and whole numbers in lo..hi inclusive', () => {
    const r = random(11);
    let min = 1;
    let max = 0;
    const hits = new Set<number>();
    for (let i = 0; i < 20000; i++) {
      const u = r.uniform();
      min = Math.min(min, u);
      max = Math.max(max, u);
      hits.add(r.int(2, 5));
    }
    expect(min).toBeGreaterThanOrEqual(0);
    expect(max).toBeLessThan(1);
    expect([...hits].sort()).toEqual([2, 3, 4, 5]);
  });

  it('gives standard normal draws by Box–Muller (normal) and by the ziggurat (normals)', () => {
    // check: standard normal distribution: mean 0, sd 1, P(|Z| > 1) = 0.3173, P(|Z| > 3) = 0.0027
    // (normal table, recalled from memory).
    const n = 400_000;
    const r = random(3);
    const boxMuller = new Float32Array(n).map(() => r.normal());
    const ziggurat = random(4).normals(new Float32Array(n));
    for (const z of [boxMuller, ziggurat]) {
      let s = 0;
      let s2 = 0;
      let over1 = 0;
      let over3 = 0;
      for (const v of z) {
        s += v;
        s2 += v * v;
        if (Math.abs(v) > 1) over1++;
        if (Math.abs(v) > 3) over3++;
      }
      expect(Math.abs(s / n)).toBeLessThan(0.01);
      expect(Math.sqrt(s2 / n)).toBeCloseTo(1, 2);
      expect(over1 / n).toBeCloseTo(0.3173, 2);
      expect(Math.abs(over3 / n - 0.0027)).toBeLessThan(0.0004);
    }
    // Scaled draws.
    const scaled = random(5).normals(new Float32Array(n), 2.5);
    expect(Math.sqrt(scaled.reduce((a, v) => a + v * v, 0) / n)).toBeCloseTo(2.5, 1);
  });
});

// The indoor scenes: given person sizes, a lamp, no cast shadows. The plaza (no person size on
// purpose, shadows beside the people, sun instead of a lamp) has its own checks in
// test/frames/synthetic/plaza.test.ts.
describe.each(sceneIds.filter((id) => id !== 'plaza'))('scene %s', (id) => {
  it('has valid zones: ids, polygons and areas pass the zones validator', () => {
    const scene = createScene(id);
    expect(() => validateZones(scene.zones, id)).not.toThrow();
    for (const zone of scene.zones) {
      expect(zone.personArea).toBeGreaterThan(0);
      expect(zone.minBlobArea).toBeGreaterThan(0);
      expect(zone.minBlobArea!).toBeLessThan(zone.personArea!);
    }
    expect(scene.width).toBe(320);
    expect(scene.height).toBe(240);
  });

  it('is deterministic: same seed and t give identical pixels and truth, other seeds differ', () => {
    const a = createScene(id, { seed: 5 });
    const b = createScene(id, { seed: 5 });
    const c = createScene(id, { seed: 6 });
    for (const t of [0, 123, 2999]) {
      const fa = a.frameAt(t);
      const fb = b.frameAt(t);
      expect(sameData(fa.frame, fb.frame)).toBe(true);
      expect(fa.truth).toEqual(fb.truth);
      expect(sameData(a.emptyFrameAt(t), b.emptyFrameAt(t))).toBe(true);
      expect(sameData(fa.frame, c.frameAt(t).frame)).toBe(false);
      expect(sameData(a.emptyFrameAt(t), c.emptyFrameAt(t))).toBe(false);
    }
  });

  it('renders frames by random access, independent of what was rendered before', () => {
    const direct = createScene(id, { seed: 2 }).frameAt(50);
    const walked = createScene(id, { seed: 2 });
    for (let t = 0; t < 50; t++) {
      walked.frameAt(t);
      walked.emptyFrameAt(t);
    }
    const after = walked.frameAt(50);
    expect(sameData(direct.frame, after.frame)).toBe(true);
    expect(after.truth).toEqual(direct.truth);
    // The `out` buffer gives the same pixels.
    const out = { width: walked.width, height: walked.height, data: new Float32Array(walked.width * walked.height) };
    expect(walked.frameAt(50, out).frame).toBe(out);
    expect(sameData(out, direct.frame)).toBe(true);
    expect(() => walked.frameAt(50, { width: 10, height: 10, data: new Float32Array(100) })).toThrow(/out frame/);
    expect(() => walked.frameAt(-1)).toThrow(/t must be/);
    expect(() => walked.frameAt(1.5)).toThrow(/t must be/);
  });

  it('gives 8-bit grey levels: whole numbers in 0..255', () => {
    const scene = createScene(id);
    for (let t = 0; t < 3000; t += 150) {
      for (const frame of [scene.frameAt(t).frame, scene.emptyFrameAt(t)]) {
        for (const v of frame.data) {
          if (!(Number.isInteger(v) && v >= 0 && v <= 255)) throw new Error(`t=${t}: grey level ${v}`);
        }
      }
    }
  });

  it('draws exactly the objects it reports: pixels differ from the empty scene only inside their boxes', () => {
    // With sensor noise off, the populated and empty frames share lighting, so their difference
    // is the drawn objects alone.
    const scene = createScene(id, { noise: 0 });
    const { width, height } = scene;
    for (let t = 0; t < SPAN; t += 97) {
      const objects = scene.objectsAt(t);
      const mask = diffMask(scene, t);
      const allowed = new Uint8Array(width * height);
      for (const o of objects) {
        const [x0, y0, x1, y1] = pixelBox(o.box, width, height, 1);
        for (let y = y0; y < y1; y++) allowed.fill(1, y * width + x0, y * width + x1);
      }
      for (let i = 0; i < mask.length; i++) {
        if (mask[i] && !allowed[i]) throw new Error(`t=${t}: pixel (${i % width}, ${Math.floor(i / width)}) changed outside every object box`);
      }
      for (const o of objects.filter(fullyInFrame)) {
        const [x0, y0, x1, y1] = pixelBox(o.box, width, height);
        let changed = 0;
        for (let y = y0; y < y1; y++) for (let x = x0; x < x1; x++) changed += mask[y * width + x];
        expect(changed / ((x1 - x0) * (y1 - y0)), `t=${t} ${o.id}`).toBeGreaterThan(0.3);
      }
      if (objects.filter(inFrame).length === 0) {
        expect(mask.every((v) => v === 0)).toBe(true);
        expect(Object.values(scene.frameAt(t).truth).every((z) => z.count === 0)).toBe(true);
      }
    }
  });

  it('has sensor noise of about 2–3 grey levels, drawn independently for the empty and populated frame', () => {
    const noisy = createScene(id);
    const clean = createScene(id, { noise: 0 });
    let s2 = 0;
    let n = 0;
    for (const t of [10, 1000, 2000]) {
      const a = noisy.emptyFrameAt(t).data;
      const b = clean.emptyFrameAt(t).data;
      for (let i = 0; i < a.length; i++) {
        if (b[i] > 5 && b[i] < 250) {
          s2 += (a[i] - b[i]) ** 2;
          n++;
        }
      }
    }
    const sd = Math.sqrt(s2 / n);
    expect(sd).toBeGreaterThan(2);
    expect(sd).toBeLessThan(3);
    // Away from every object, a frame against the empty frame of the same t: two independent
    // noise draws, so the difference has √2 times the noise.
    const t = 1500;
    const { width, height } = noisy;
    const away = new Uint8Array(width * height).fill(1);
    for (const o of noisy.objectsAt(t)) {
      const [x0, y0, x1, y1] = pixelBox(o.box, width, height, 2);
      for (let y = y0; y < y1; y++) away.fill(0, y * width + x0, y * width + x1);
    }
    const a = noisy.frameAt(t).frame.data;
    const b = noisy.emptyFrameAt(t).data;
    const c = clean.emptyFrameAt(t).data;
    let d2 = 0;
    let m = 0;
    for (let i = 0; i < a.length; i++) {
      if (!away[i] || c[i] <= 5 || c[i] >= 250) continue;
      d2 += (a[i] - b[i]) ** 2;
      m++;
    }
    expect(m).toBeGreaterThan(10000);
    expect(Math.sqrt(d2 / m) / sd).toBeCloseTo(Math.SQRT2, 1);
  });

  it('shows both lamp levels and the daylight drift in empty frames over one lighting period', () => {
    const scene = createScene(id);
    const { width, height, lamp } = scene;
    expect(lamp).toBeDefined();
    const cx = lamp!.centre[0] * width;
    const cy = lamp!.centre[1] * height;
    const s = lamp!.radius * height;
    // Lamp core: within half a radius of the centre. Reference: pixels more than 3.5 radii away.
    const core: number[] = [];
    const far: number[] = [];
    for (let y = 0; y < height; y++) {
      for (let x = 0; x < width; x++) {
        const d = Math.hypot(x + 0.5 - cx, y + 0.5 - cy);
        if (d < 0.5 * s) core.push(y * width + x);
        else if (d > 3.5 * s) far.push(y * width + x);
      }
    }
    expect(core.length).toBeGreaterThan(100);
    expect(far.length).toBeGreaterThan(1000);
    const ratios: number[] = [];
    const farMeans: number[] = [];
    const step = 10;
    for (let t = 0; t < scene.lightingPeriod; t += step) {
      const f = scene.emptyFrameAt(t).data;
      const mean = (idx: number[]) => idx.reduce((a, i) => a + f[i], 0) / idx.length;
      ratios.push(mean(core) / mean(far));
      farMeans.push(mean(far));
    }
    // Two clusters of the core/reference ratio, separated by a clear gap.
    const sorted = ratios.slice().sort((a, b) => a - b);
    let gap = 0;
    let at = 0;
    for (let i = 1; i < sorted.length; i++) if (sorted[i] - sorted[i - 1] > gap) [gap, at] = [sorted[i] - sorted[i - 1], i];
    expect(gap).toBeGreaterThan(0.05);
    expect(at / sorted.length).toBeGreaterThan(0.1);
    expect(at / sorted.length).toBeLessThan(0.9);
    expect(sorted[at - 1] - sorted[0]).toBeLessThan(gap);
    expect(sorted[sorted.length - 1] - sorted[at]).toBeLessThan(gap);
    // The bright cluster is exactly the frames the scene reports the lamp on in.
    const split = (sorted[at - 1] + sorted[at]) / 2;
    ratios.forEach((r, k) => expect(r > split, `t=${k * step}`).toBe(lamp!.onAt(k * step)));
    expect(lamp!.switchFrames.length).toBeGreaterThanOrEqual(2);
    // Daylight: the unlit reference area's brightness drifts by several percent over the period.
    const lo = Math.min(...farMeans);
    const hi = Math.max(...farMeans);
    expect((hi - lo) / ((hi + lo) / 2)).toBeGreaterThan(id === 'reading-room' ? 0.15 : 0.07);
    expect((hi - lo) / ((hi + lo) / 2)).toBeLessThan(0.4);
    // The lighting repeats with its period.
    const clean = createScene(id, { noise: 0 });
    expect(sameData(clean.emptyFrameAt(17), clean.emptyFrameAt(17 + scene.lightingPeriod))).toBe(true);
  });

  it('streams frames as a frame source', async () => {
    const scene = createScene(id);
    const names: string[] = [];
    for await (const item of syntheticFrames(scene, { start: 5, count: 3 })) {
      names.push(item.name);
      expect(item.error).toBeUndefined();
      expect(sameData(item.frame!, scene.frameAt(Number(item.name)).frame)).toBe(true);
    }
    expect(names).toEqual(['5', '6', '7']);
    for await (const item of syntheticFrames(scene, { start: 9, count: 1, empty: true })) {
      expect(sameData(item.frame!, scene.emptyFrameAt(9))).toBe(true);
    }
    let n = 0;
    for await (const _ of syntheticFrames(scene, { count: 0 })) n++;
    expect(n).toBe(0);
    await expect(syntheticFrames(scene, { count: -1 }).next()).rejects.toThrow(/count/);
    await expect(syntheticFrames(scene, { start: 0.5 }).next()).rejects.toThrow(/start/);
    const controller = new AbortController();
    const endless = syntheticFrames(scene, { signal: controller.signal });
    expect((await endless.next()).value?.name).toBe('0');
    controller.abort(new Error('stop'));
    await expect(endless.next()).rejects.toThrow('stop');
  });
});

describe('reading room', () => {
  it('counts people by foot point: truth equals a recount from the drawn boxes', () => {
    const scene = createReadingRoom();
    for (let t = 0; t < SPAN; t += 7) {
      const { truth } = scene.frameAt(t);
      const objects = scene.objectsAt(t);
      for (const o of objects) {
        expect(o.kind).toBe('person');
        // The anchor is the bottom centre of the box.
        expect(o.anchor[0]).toBeCloseTo((o.box[0] + o.box[2]) / 2, 12);
        expect(o.anchor[1]).toBe(o.box[3]);
      }
      for (const zone of scene.zones) {
        const counted = objects.filter((o) => inside(o.anchor, zone.polygon));
        expect(truth[zone.id], `t=${t} ${zone.id}`).toEqual({ count: counted.length });
        // Counted people are entirely inside the frame.
        for (const o of counted) expect(fullyInFrame(o), `t=${t} ${o.id}`).toBe(true);
      }
    }
  });

  it('has empty moments, busy zones and overlapping pairs within its first 400 s', () => {
    for (const seed of [1, 2, 3]) {
      const scene = createReadingRoom({ seed });
      let firstVisitor = -1;
      let emptyAgain = -1;
      let crowded = -1;
      let merged = -1;
      for (let t = 0; t < SPAN; t++) {
        const objects = scene.objectsAt(t).filter(inFrame);
        if (objects.length > 0 && firstVisitor < 0) firstVisitor = t;
        if (objects.length === 0 && firstVisitor >= 0 && emptyAgain < 0) emptyAgain = t;
        if (t % 10 === 0 && crowded < 0 && Object.values(scene.frameAt(t).truth).some((z) => z.count >= 2)) crowded = t;
        if (merged < 0) {
          const people = objects.filter(fullyInFrame);
          for (const a of people) {
            for (const b of people) {
              if (a.id < b.id && a.group !== undefined && a.group === b.group && boxOverlap(a, b) > 0.25) merged = t;
            }
          }
        }
      }
      expect(firstVisitor, `seed ${seed}`).toBeGreaterThanOrEqual(0);
      expect(emptyAgain, `seed ${seed}`).toBeGreaterThan(firstVisitor);
      expect(crowded, `seed ${seed}`).toBeGreaterThanOrEqual(0);
      expect(merged, `seed ${seed}`).toBeGreaterThanOrEqual(0);
    }
  });

  it('draws a pair as one merged blob', () => {
    const scene = createReadingRoom({ noise: 0 });
    const { width, height } = scene;
    let checked = 0;
    for (let t = 0; t < SPAN && checked < 5; t += 37) {
      const people = scene.objectsAt(t);
      for (const a of people) {
        const b = people.find((o) => o !== a && o.group !== undefined && o.group === a.group && a.id < o.id);
        if (b === undefined || !fullyInFrame(a) || !fullyInFrame(b) || boxOverlap(a, b) < 0.25) continue;
        const union = [Math.min(a.box[0], b.box[0]), Math.min(a.box[1], b.box[1]), Math.max(a.box[2], b.box[2]), Math.max(a.box[3], b.box[3])];
        const rect = pixelBox(union, width, height, 1);
        // Only pairs nobody else comes near.
        const near = people.some((o) => {
          if (o === a || o === b) return false;
          const [ox0, oy0, ox1, oy1] = pixelBox(o.box, width, height, 1);
          return ox0 < rect[2] && ox1 > rect[0] && oy0 < rect[3] && oy1 > rect[1];
        });
        if (near) continue;
        const sizes = componentSizes(diffMask(scene, t), width, rect).filter((s) => s >= 10);
        expect(sizes, `t=${t} ${a.id}+${b.id}`).toHaveLength(1);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(0);
  });

  it('gives each room zone the drawn area of one person (standing, or seated at the tables)', () => {
    const scene = createReadingRoom({ noise: 0 });
    const { width, height } = scene;
    const area = (posture: string) => scene.zones.find((z) => z.id === (posture === 'seated' ? 'tables' : 'entrance'))!.personArea! * width * height;
    expect(scene.zones.find((z) => z.id === 'stacks')!.personArea).toBe(scene.zones.find((z) => z.id === 'entrance')!.personArea);
    const ratios: Record<string, number[]> = { standing: [], seated: [] };
    for (let t = 0; t < SPAN; t += 23) {
      const people = scene.objectsAt(t);
      const mask = diffMask(scene, t);
      for (const p of people) {
        if (!fullyInFrame(p) || people.some((o) => o !== p && boxOverlap(o, p) > 0)) continue;
        const [x0, y0, x1, y1] = pixelBox(p.box, width, height, 1);
        let changed = 0;
        for (let y = y0; y < y1; y++) for (let x = x0; x < x1; x++) changed += mask[y * width + x];
        ratios[p.posture!].push(changed / area(p.posture!));
      }
    }
    for (const posture of ['standing', 'seated']) {
      expect(ratios[posture].length, posture).toBeGreaterThan(10);
      const median = ratios[posture].sort((a, b) => a - b)[Math.floor(ratios[posture].length / 2)];
      // Changed pixels include the soft edge (up to ~¾ px outside the contour the area is measured on).
      expect(median, posture).toBeGreaterThan(0.95);
      expect(median, posture).toBeLessThan(1.3);
    }
    expect(area('seated')).toBeLessThan(area('standing'));
  });

  it('validates its options, naming the field', () => {
    expect(() => createReadingRoom({ width: 10 })).toThrow(/width/);
    expect(() => createReadingRoom({ height: 5000 })).toThrow(/height/);
    expect(() => createReadingRoom({ seed: 0.5 })).toThrow(/seed/);
    expect(() => createReadingRoom({ noise: -1 })).toThrow(/noise/);
    expect(() => createReadingRoom({ lightingPeriod: 3 })).toThrow(/lightingPeriod/);
    expect(() => createReadingRoom({ frameRate: 0 })).toThrow(/frameRate/);
  });

  it('scales to other frame sizes', () => {
    const scene = createReadingRoom({ width: 160, height: 120 });
    const { frame, truth } = scene.frameAt(400);
    expect(frame.data.length).toBe(160 * 120);
    expect(Object.keys(truth)).toEqual(['entrance', 'stacks', 'tables']);
    // People scale with the height, so the area fraction stays put.
    expect(scene.zones[0].personArea).toBeCloseTo(createReadingRoom().zones[0].personArea!, 3);
  });
});

describe('stock room', () => {
  it('counts boxes by centroid and measures fill: truth equals a recount from the drawn boxes', () => {
    const scene = createStockRoom();
    const { width, height } = scene;
    const rasters = scene.zones.map((z) => zoneRaster(z, width, height));
    let sawEmpty = false;
    let sawHalf = false;
    for (let t = 0; t < SPAN * 3; t += 120) {
      const { truth } = scene.frameAt(t);
      const boxes = scene.objectsAt(t);
      // Boxes never overlap, and the anchor is the box centre.
      for (const a of boxes) {
        expect(a.kind).toBe('item');
        expect(a.anchor[0]).toBeCloseTo((a.box[0] + a.box[2]) / 2, 12);
        expect(a.anchor[1]).toBeCloseTo((a.box[1] + a.box[3]) / 2, 12);
        for (const b of boxes) if (a !== b) expect(boxOverlap(a, b), `${a.id} ${b.id}`).toBe(0);
      }
      const covered = new Uint8Array(width * height);
      for (const b of boxes) {
        // Boxes lie on pixel boundaries.
        const [x0, y0, x1, y1] = b.box.map((v, j) => v * (j % 2 === 0 ? width : height));
        for (const v of [x0, y0, x1, y1]) expect(Math.abs(v - Math.round(v))).toBeLessThan(1e-9);
        for (let y = Math.round(y0); y < Math.round(y1); y++) covered.fill(1, y * width + Math.round(x0), y * width + Math.round(x1));
      }
      scene.zones.forEach((zone, k) => {
        const count = boxes.filter((b) => inside(b.anchor, zone.polygon)).length;
        let zonePixels = 0;
        let hit = 0;
        for (let i = 0; i < covered.length; i++) {
          zonePixels += rasters[k][i];
          hit += rasters[k][i] & covered[i];
        }
        const z = truth[zone.id];
        expect(z.count, `t=${t} ${zone.id}`).toBe(count);
        expect(z.fill).toBeGreaterThanOrEqual(0);
        expect(z.fill).toBeLessThanOrEqual(1);
        expect(z.fill!, `t=${t} ${zone.id}`).toBeCloseTo(hit / zonePixels, 12);
        if (z.count === 0) sawEmpty = true;
        if (z.fill! > 0.4) sawHalf = true;
      });
    }
    // The schedule drains sections and restocks them.
    expect(sawEmpty).toBe(true);
    expect(sawHalf).toBe(true);
  });

  it('gives each shelf zone the mean area of one box', () => {
    const scene = createStockRoom();
    const areas = new Map<string, number>(); // box id → area fraction
    for (let t = 0; t < scene.schedulePeriod; t += 50) {
      for (const b of scene.objectsAt(t)) areas.set(b.id, (b.box[2] - b.box[0]) * (b.box[3] - b.box[1]));
    }
    for (const zone of scene.zones) {
      const mine = [...areas].filter(([id]) => id.startsWith(zone.id + ':')).map(([, a]) => a);
      expect(mine.length).toBeGreaterThan(20);
      const mean = mine.reduce((a, v) => a + v, 0) / mine.length;
      expect(zone.personArea! / mean).toBeGreaterThan(0.9);
      expect(zone.personArea! / mean).toBeLessThan(1.1);
      expect(zone.minBlobArea!).toBeLessThan(Math.min(...mine));
    }
  });

  it('offers 3 or 4 sections and validates its options', () => {
    expect(createScene('stock-room').zones.map((z) => z.id)).toEqual(['shelf-top', 'shelf-middle', 'shelf-bottom']);
    expect(createScene('stock-room', { sections: 4 }).zones.map((z) => z.id)).toEqual(['shelf-top', 'shelf-upper', 'shelf-lower', 'shelf-bottom']);
    expect(createStockRoom().zones.every((z) => z.kind === 'shelf')).toBe(true);
    expect(() => createStockRoom({ sections: 5 as 3 })).toThrow(/sections/);
    expect(() => createStockRoom({ slots: 1 })).toThrow(/slots/);
    expect(() => createScene('office' as 'stock-room')).toThrow(/scene id/);
  });
});
