/**
 * Checks of our own synthetic plaza (invented scene, no real people): what it promises to draw
 * and to count. Most expected values come from the scene's own definition (its module comment:
 * sizes, shares, light levels); the truth is recounted here with independent code (an
 * axis-aligned rectangle test, pixel differences against the empty frame). Facts taken from
 * outside are marked with `check:`.
 */
import { describe, expect, it } from 'vitest';
import { validateZones } from '../../../src/counting/parseZones.ts';
import { frameInput } from '../../../src/commands/frameInput.ts';
import type { GreyFrame } from '../../../src/domain/frame.ts';
import { createPlaza, type PlazaScene } from '../../../src/frames/synthetic/plaza.ts';
import { createScene, sceneIds, type SceneObject } from '../../../src/frames/synthetic/index.ts';

const SPAN = 3000; // frames (300 s at 10 fps)
const PAVING_TOP = 0.25; // the façade's base, from the scene's layout

const sameData = (a: GreyFrame, b: GreyFrame) => a.data.length === b.data.length && a.data.every((v, i) => v === b.data[i]);
const fullyInFrame = (o: SceneObject) => o.box[0] >= 0 && o.box[1] >= 0 && o.box[2] <= 1 && o.box[3] <= 1;
const inFrame = (o: SceneObject) => o.box[2] > 0 && o.box[0] < 1 && o.box[3] > 0 && o.box[1] < 1;

/** The zone polygon as [x0, y0, x1, y1], after checking that it is an axis-aligned rectangle. */
function rectangleOf(polygon: readonly (readonly [number, number])[]): [number, number, number, number] {
  const xs = [...new Set(polygon.map((p) => p[0]))].sort((a, b) => a - b);
  const ys = [...new Set(polygon.map((p) => p[1]))].sort((a, b) => a - b);
  expect(polygon).toHaveLength(4);
  expect(xs).toHaveLength(2);
  expect(ys).toHaveLength(2);
  return [xs[0], ys[0], xs[1], ys[1]];
}
/** Inside a rectangle, left and top edges included, right and bottom excluded. */
const inRect = (p: readonly [number, number], r: readonly number[]) => p[0] >= r[0] && p[0] < r[2] && p[1] >= r[1] && p[1] < r[3];

/** Pixel bounds [x0, y0, x1, y1) of a normalised box, expanded by `margin` px, clipped to the frame. */
function pixelBox(box: readonly number[], width: number, height: number, margin = 0): [number, number, number, number] {
  return [
    Math.max(0, Math.floor(box[0] * width - margin)),
    Math.max(0, Math.floor(box[1] * height - margin)),
    Math.min(width, Math.ceil(box[2] * width + margin)),
    Math.min(height, Math.ceil(box[3] * height + margin)),
  ];
}
const boxesMeet = (a: readonly number[], b: readonly number[]) => a[0] < b[2] && b[0] < a[2] && a[1] < b[3] && b[1] < a[3];

/** People fully in the frame whose box, widened by `reach` of their height, meets nobody else's box. */
function isolated(objects: readonly SceneObject[], reach: number): SceneObject[] {
  return objects.filter((o) => {
    if (!fullyInFrame(o)) return false;
    const h = o.box[3] - o.box[1];
    const wide = [o.box[0] - reach * h, o.box[1] - 0.1 * h, o.box[2] + reach * h, o.box[3] + reach * h];
    return objects.every((p) => p === o || !boxesMeet(wide, p.box));
  });
}

/** Sizes of the 4-connected components of `mask` inside rect. */
function componentSizes(mask: Uint8Array, width: number, rect: readonly number[]): number[] {
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

/** 1 where frame t differs from the empty frame t (a noise-free scene: the drawn people, and shadows if on). */
function diffMask(scene: PlazaScene, t: number): Uint8Array {
  const full = scene.frameAt(t).frame.data;
  const empty = scene.emptyFrameAt(t).data;
  const mask = new Uint8Array(full.length);
  for (let i = 0; i < full.length; i++) mask[i] = full[i] !== empty[i] ? 1 : 0;
  return mask;
}

/** Mean of a frame over a normalised rectangle. */
function meanOver(frame: GreyFrame, rect: readonly number[]): number {
  const [x0, y0, x1, y1] = pixelBox(rect, frame.width, frame.height);
  let sum = 0;
  for (let y = y0; y < y1; y++) for (let x = x0; x < x1; x++) sum += frame.data[y * frame.width + x];
  return sum / ((x1 - x0) * (y1 - y0));
}

describe('plaza', () => {
  const scene = createPlaza();

  it('is registered as a scene, has valid room zones without a person size, and reads as synthetic:plaza', async () => {
    expect(sceneIds).toContain('plaza');
    const made = createScene('plaza', { seed: 4 });
    expect(made.id).toBe('plaza');
    expect(sameData(made.frameAt(30).frame, createPlaza({ seed: 4 }).frameAt(30).frame)).toBe(true);
    expect(() => validateZones(scene.zones, 'plaza')).not.toThrow();
    expect(scene.zones.map((z) => z.id)).toEqual(['square', 'far', 'near']);
    expect(createPlaza({ halves: false }).zones.map((z) => z.id)).toEqual(['square']);
    for (const zone of scene.zones) {
      expect(zone.kind).toBe('room');
      expect(zone.personArea).toBeUndefined();
      const [x0, y0, x1, y1] = rectangleOf(zone.polygon);
      expect(x0).toBeGreaterThan(0.02);
      expect(x1).toBeLessThan(0.98);
      expect(y0).toBeGreaterThanOrEqual(PAVING_TOP);
      expect(y1).toBeLessThan(0.98);
    }
    // The halves split the square.
    const [square, far, near] = scene.zones.map((z) => rectangleOf(z.polygon));
    expect([far[1], far[3], near[1], near[3]]).toEqual([square[1], near[1], far[3], square[3]]);
    expect(scene.frameRate).toBe(10);
    expect([scene.width, scene.height]).toEqual([320, 240]);
    // The command line's frame input takes it like the other scenes.
    const names: string[] = [];
    for await (const item of frameInput('synthetic:plaza', { limit: 2 })) {
      names.push(item.name);
      expect(sameData(item.frame!, scene.frameAt(Number(item.name)).frame)).toBe(true);
    }
    expect(names).toEqual(['0', '1']);
    for await (const item of frameInput('synthetic:plaza:empty', { limit: 1 })) expect(sameData(item.frame!, scene.emptyFrameAt(0))).toBe(true);
  });

  it('is deterministic: the same t gives the same pixels and truth, whatever was rendered before; other seeds differ', () => {
    const a = createPlaza({ seed: 5 });
    const b = createPlaza({ seed: 5 });
    const c = createPlaza({ seed: 6 });
    for (const t of [0, 777, 2999, 40_000]) {
      const first = a.frameAt(t);
      const pixels = Float32Array.from(first.frame.data);
      a.frameAt(t + 13);
      a.emptyFrameAt(t);
      const again = a.frameAt(t);
      expect(again.frame.data).toEqual(pixels);
      expect(again.truth).toEqual(first.truth);
      expect(sameData(b.frameAt(t).frame, again.frame)).toBe(true);
      expect(b.objectsAt(t)).toEqual(a.objectsAt(t));
      expect(sameData(a.emptyFrameAt(t), b.emptyFrameAt(t))).toBe(true);
      expect(sameData(c.frameAt(t).frame, again.frame)).toBe(false);
    }
    // The `out` buffer is written and returned; one of another size is refused.
    const out = { width: 320, height: 240, data: new Float32Array(320 * 240) };
    expect(a.frameAt(777, out).frame).toBe(out);
    expect(sameData(out, b.frameAt(777).frame)).toBe(true);
    expect(a.emptyFrameAt(777, out)).toBe(out);
    expect(() => a.frameAt(1, { width: 10, height: 10, data: new Float32Array(100) })).toThrow(/out frame/);
    expect(() => a.frameAt(-1)).toThrow(/t must be/);
    expect(() => a.sunPatchAt(0.5)).toThrow(/t must be/);
  });

  it('counts people by foot point: truth equals a recount of objectsAt with a rectangle test', () => {
    const rects = scene.zones.map((z) => rectangleOf(z.polygon));
    let partlyOutside = 0;
    for (let t = 0; t < SPAN; t += 7) {
      const { truth } = scene.frameAt(t);
      const objects = scene.objectsAt(t);
      for (const o of objects) {
        expect(o.kind).toBe('person');
        expect(inFrame(o), `t=${t} ${o.id}`).toBe(true);
        expect(o.anchor[0]).toBeCloseTo((o.box[0] + o.box[2]) / 2, 12);
        expect(o.anchor[1]).toBe(o.box[3]);
        if (!fullyInFrame(o)) partlyOutside++;
      }
      // Back to front: foot rows never decrease.
      for (let k = 1; k < objects.length; k++) expect(objects[k].anchor[1]).toBeGreaterThanOrEqual(objects[k - 1].anchor[1]);
      scene.zones.forEach((zone, k) => {
        const counted = objects.filter((o) => inRect(o.anchor, rects[k]));
        expect(truth[zone.id], `t=${t} ${zone.id}`).toEqual({ count: counted.length });
        // A counted person is entirely inside the frame.
        for (const o of counted) expect(fullyInFrame(o), `t=${t} ${o.id}`).toBe(true);
      });
    }
    // People entering and leaving are drawn partly outside the frame (and not counted).
    expect(partlyOutside).toBeGreaterThan(20);
  });

  it('is never empty: about 6 people in view on average, 2–10 most of the time, someone in the square in every frame', () => {
    for (const seed of [1, 2, 3]) {
      const s = createPlaza({ seed });
      const square = rectangleOf(s.zones[0].polygon);
      let sum = 0;
      let typical = 0;
      for (let t = 0; t < SPAN; t++) {
        const objects = s.objectsAt(t);
        sum += objects.length;
        if (objects.length >= 2 && objects.length <= 10) typical++;
        const inSquare = objects.filter((o) => inRect(o.anchor, square)).length;
        if (inSquare === 0) throw new Error(`seed ${seed}, t=${t}: nobody in the square`);
        if (t % 100 === 0) expect(s.frameAt(t).truth.square.count).toBe(inSquare);
      }
      expect(sum / SPAN, `seed ${seed}`).toBeGreaterThan(4.5);
      expect(sum / SPAN, `seed ${seed}`).toBeLessThan(7.5);
      expect(typical / SPAN, `seed ${seed}`).toBeGreaterThan(0.8);
    }
    // Steady state from the first frame, and the option moves the mean.
    expect(scene.objectsAt(0).filter(fullyInFrame).length).toBeGreaterThanOrEqual(2);
    const busy = createPlaza({ meanPeople: 12 });
    let busySum = 0;
    for (let t = 0; t < SPAN; t += 10) busySum += busy.objectsAt(t).length;
    expect(busySum / (SPAN / 10)).toBeGreaterThan(9);
  });

  it('has walkers in every direction, groups of 2 and 3 drawn as one blob, far-edge walkers and a person standing still', () => {
    const paths = new Map<string, Array<[number, number]>>();
    const groups = new Map<string, Set<string>>();
    let groupFrames = 0;
    let connected = 0;
    for (let t = 0; t < SPAN; t++) {
      const objects = scene.objectsAt(t);
      const byGroup = new Map<string, SceneObject[]>();
      for (const o of objects) {
        if (!paths.has(o.id)) paths.set(o.id, []);
        paths.get(o.id)!.push([o.anchor[0], o.anchor[1]]);
        if (o.group === undefined) continue;
        if (!groups.has(o.group)) groups.set(o.group, new Set());
        groups.get(o.group)!.add(o.id);
        if (!byGroup.has(o.group)) byGroup.set(o.group, []);
        byGroup.get(o.group)!.push(o);
      }
      // Members of a group in the frame: their boxes overlap in a chain (one merged blob).
      for (const members of byGroup.values()) {
        if (members.length < 2 || !members.every(fullyInFrame)) continue;
        groupFrames++;
        const reached = new Set([members[0]]);
        for (let grew = true; grew; ) {
          grew = false;
          for (const m of members) {
            if (!reached.has(m) && [...reached].some((r) => boxesMeet(r.box, m.box))) {
              reached.add(m);
              grew = true;
            }
          }
        }
        if (reached.size === members.length) connected++;
      }
    }
    // About a third of the parties are groups, of 2 and of 3.
    const parties = new Set([...paths.keys()].map((id) => id.replace(/[abc]$/, '')));
    const sizes = [...groups.values()].map((m) => m.size);
    expect(groups.size / parties.size).toBeGreaterThan(0.2);
    expect(groups.size / parties.size).toBeLessThan(0.5);
    expect(sizes).toContain(2);
    expect(sizes).toContain(3);
    expect(groupFrames).toBeGreaterThan(500);
    expect(connected / groupFrames).toBeGreaterThan(0.9);
    // In pixels: a group nobody else comes near is one connected patch of changed pixels.
    const clean = createPlaza({ noise: 0, shadows: false });
    let blobs = 0;
    for (let t = 0; t < SPAN && blobs < 6; t += 29) {
      const objects = clean.objectsAt(t);
      const byGroup = new Map<string, SceneObject[]>();
      for (const o of objects) if (o.group !== undefined) byGroup.set(o.group, [...(byGroup.get(o.group) ?? []), o]);
      for (const members of byGroup.values()) {
        if (members.length < 2 || !members.every(fullyInFrame)) continue;
        const union = [0, 1, 2, 3].map((k) => (k < 2 ? Math.min : Math.max)(...members.map((m) => m.box[k])));
        const rect = pixelBox(union, clean.width, clean.height, 2);
        const near = objects.some((o) => !members.includes(o) && boxesMeet(pixelBox(o.box, clean.width, clean.height, 2), rect));
        if (near) continue;
        const sizes = componentSizes(diffMask(clean, t), clean.width, rect).filter((s) => s >= 10);
        expect(sizes, `t=${t} ${members.map((m) => m.id).join('+')}`).toHaveLength(1);
        blobs++;
      }
    }
    expect(blobs).toBeGreaterThanOrEqual(3);

    // Directions: net displacement of the people seen for at least 5 s.
    const moves = [...paths.values()].filter((p) => p.length >= 50).map((p) => [p[p.length - 1][0] - p[0][0], p[p.length - 1][1] - p[0][1]]);
    expect(moves.some(([dx, dy]) => dx > 0.3 && Math.abs(dy) < 0.1)).toBe(true); // to the right
    expect(moves.some(([dx, dy]) => dx < -0.3 && Math.abs(dy) < 0.1)).toBe(true); // to the left
    expect(moves.some(([dx, dy]) => dy > 0.3 && Math.abs(dx) < 0.3)).toBe(true); // towards the camera
    expect(moves.some(([dx, dy]) => dy < -0.3 && Math.abs(dx) < 0.3)).toBe(true); // away from it
    expect(moves.some(([dx, dy]) => Math.abs(dx) > 0.3 && Math.abs(dy) > 0.2)).toBe(true); // diagonally
    // Far-edge walkers: their feet never below row 0.32, seen for at least 10 s.
    expect([...paths.values()].filter((p) => p.length >= 100 && p.every(([, y]) => y < 0.32)).length).toBeGreaterThanOrEqual(3);
    // The stander: somebody at exactly one spot for 2 minutes or more.
    const longestStill = (p: Array<[number, number]>) => {
      let best = 0;
      let run = 0;
      for (let k = 1; k < p.length; k++) {
        run = p[k][0] === p[k - 1][0] && p[k][1] === p[k - 1][1] ? run + 1 : 0;
        best = Math.max(best, run);
      }
      return best;
    };
    const still = [...paths.entries()].filter(([, p]) => longestStill(p) >= 1200);
    expect(still.length).toBeGreaterThanOrEqual(1);
    expect(still.every(([, p]) => p.some(([x, y]) => inRect([x, y], rectangleOf(scene.zones[0].polygon))))).toBe(true);
    // … who comes back later in the schedule, and is gone with standSeconds: 0.
    const laterStill = new Map<string, number>();
    for (let t = 5000; t < 9000; t += 10) for (const o of scene.objectsAt(t)) if (o.id.startsWith('s')) laterStill.set(o.id, (laterStill.get(o.id) ?? 0) + 1);
    expect(Math.max(0, ...laterStill.values())).toBeGreaterThanOrEqual(120);
    const restless = createPlaza({ standSeconds: 0 });
    const last = new Map<string, [number, number, number]>();
    for (let t = 0; t < SPAN; t++) {
      for (const o of restless.objectsAt(t)) {
        const seen = last.get(o.id);
        const run = seen && seen[0] === o.anchor[0] && seen[1] === o.anchor[1] ? seen[2] + 1 : 0;
        if (run > 50) throw new Error(`t=${t}: ${o.id} stands still with standSeconds: 0`);
        last.set(o.id, [o.anchor[0], o.anchor[1], run]);
      }
    }
  });

  it('draws people in perspective: drawn area follows personAreaAt, from 0.07 of the height at the far edge to 0.28 at the bottom', () => {
    // check: pinhole camera over a ground plane — an upright object's image height is proportional
    // to the distance of its base from the horizon (D. Hoiem, A. A. Efros, M. Hebert, "Putting
    // objects in perspective", CVPR 2006; recalled from memory), so its area goes with the square.
    const h = scene.horizon;
    expect(h).toBeLessThan(0);
    expect(scene.personAreaAt(0.9) / scene.personAreaAt(0.35)).toBeCloseTo(((0.9 - h) / (0.35 - h)) ** 2, 9);
    expect(scene.personHeightAt(PAVING_TOP)).toBeGreaterThan(0.06);
    expect(scene.personHeightAt(PAVING_TOP)).toBeLessThan(0.085);
    expect(scene.personHeightAt(1)).toBeCloseTo(0.28, 9);
    // Boxes have the stated heights (0.93–1.07 of the mean person).
    for (let t = 0; t < SPAN; t += 50) {
      for (const o of scene.objectsAt(t)) {
        const ratio = (o.box[3] - o.box[1]) / scene.personHeightAt(o.anchor[1]);
        expect(ratio).toBeGreaterThanOrEqual(0.93 - 1e-9);
        expect(ratio).toBeLessThanOrEqual(1.07 + 1e-9);
      }
    }

    // Drawn areas, measured as pixels that differ from the empty frame (no noise, no shadows), at
    // 768×576 where the soft edge is small against a person.
    const big = createPlaza({ width: 768, height: 576, noise: 0, shadows: false });
    const frameArea = big.width * big.height;
    const bins = { near: [0.85, 0.95], far: [0.3, 0.4] } as const;
    const ratios: Record<keyof typeof bins, number[]> = { near: [], far: [] };
    for (let t = 0; t < big.schedulePeriod && (ratios.near.length < 12 || ratios.far.length < 12); t += 37) {
      const people = isolated(big.objectsAt(t), 0.2).filter((o) => Object.values(bins).some(([a, b]) => o.anchor[1] >= a && o.anchor[1] < b));
      if (people.length === 0) continue;
      const mask = diffMask(big, t);
      for (const p of people) {
        const [x0, y0, x1, y1] = pixelBox(p.box, big.width, big.height, 2);
        let changed = 0;
        for (let y = y0; y < y1; y++) for (let x = x0; x < x1; x++) changed += mask[y * big.width + x];
        const bin = p.anchor[1] >= bins.near[0] ? 'near' : 'far';
        ratios[bin].push(changed / (big.personAreaAt(p.anchor[1]) * frameArea));
      }
    }
    const median = (v: number[]) => v.slice().sort((a, b) => a - b)[Math.floor(v.length / 2)];
    expect(ratios.near.length).toBeGreaterThanOrEqual(8);
    expect(ratios.far.length).toBeGreaterThanOrEqual(8);
    // Changed pixels include part of the soft edge (up to ~¾ px outside the contour the area is
    // measured on), relatively more of a small person.
    for (const bin of ['near', 'far'] as const) {
      expect(median(ratios[bin]), bin).toBeGreaterThan(0.9);
      expect(median(ratios[bin]), bin).toBeLessThan(1.3);
    }
    // Drawn area at row 0.9 over drawn area at row 0.35 is personAreaAt's ratio within 20 %.
    const drawnRatio = (median(ratios.near) * big.personAreaAt(0.9)) / (median(ratios.far) * big.personAreaAt(0.35));
    const truthRatio = big.personAreaAt(0.9) / big.personAreaAt(0.35);
    expect(drawnRatio / truthRatio).toBeGreaterThan(0.8);
    expect(drawnRatio / truthRatio).toBeLessThan(1.2);
    // The area fraction does not depend on the resolution (same aspect ratio).
    expect(big.personAreaAt(0.6)).toBeCloseTo(scene.personAreaAt(0.6), 12);
  });

  it('casts shadows next to the feet on the paving only; shadows change no count and never reach emptyFrameAt', () => {
    const sunny = createPlaza({ noise: 0 });
    const plain = createPlaza({ noise: 0, shadows: false });
    const { width, height } = sunny;
    const topRow = Math.round(PAVING_TOP * height);
    let checked = 0;
    for (let t = 0; t < SPAN && checked < 12; t += 41) {
      const on = sunny.frameAt(t);
      const off = plain.frameAt(t);
      const empty = sunny.emptyFrameAt(t);
      expect(on.truth).toEqual(off.truth);
      expect(sameData(empty, plain.emptyFrameAt(t))).toBe(true);
      // Shadows only darken, and only the paving.
      for (let i = 0; i < on.frame.data.length; i++) {
        if (on.frame.data[i] > off.frame.data[i]) throw new Error(`t=${t}: a shadow brightens pixel ${i}`);
        if (i < topRow * width && on.frame.data[i] !== off.frame.data[i]) throw new Error(`t=${t}: a shadow on the façade, pixel ${i}`);
      }
      for (const p of isolated(sunny.objectsAt(t), 0.8)) {
        const h = (p.box[3] - p.box[1]) * height;
        const fx = p.anchor[0] * width;
        const fy = p.anchor[1] * height;
        let darkened = 0;
        let darkest = 1;
        let nearest = Infinity;
        let personPixels = 0;
        for (let y = Math.max(topRow, Math.floor(fy - 0.8 * h)); y < Math.min(height, Math.ceil(fy + 0.8 * h)); y++) {
          for (let x = Math.max(0, Math.floor(fx - 0.8 * h)); x < Math.min(width, Math.ceil(fx + 0.8 * h)); x++) {
            const i = y * width + x;
            if (off.frame.data[i] !== empty.data[i]) {
              personPixels++;
              continue;
            }
            const ratio = on.frame.data[i] / empty.data[i];
            if (ratio > 0.85) continue;
            darkened++;
            darkest = Math.min(darkest, ratio);
            nearest = Math.min(nearest, Math.hypot(x + 0.5 - fx, y + 0.5 - fy));
          }
        }
        // A patch of a fair size, 0.6–0.75 of the paving's light at its darkest (± rounding),
        // touching the feet.
        expect(darkened, `t=${t} ${p.id}`).toBeGreaterThan(0.15 * personPixels);
        expect(darkest, `t=${t} ${p.id}`).toBeGreaterThan(0.58);
        expect(darkest, `t=${t} ${p.id}`).toBeLessThan(0.77);
        expect(nearest, `t=${t} ${p.id}`).toBeLessThan(2.5);
        checked++;
      }
    }
    expect(checked).toBeGreaterThanOrEqual(5);
  });

  it('puts no people or shadows in emptyFrameAt: it is frameAt outside the people, and one picture up to the light', () => {
    const clean = createPlaza({ noise: 0, shadows: false });
    const { width, height } = clean;
    for (const t of [0, 250, 900]) {
      const full = clean.frameAt(t).frame.data;
      const empty = clean.emptyFrameAt(t).data;
      const allowed = new Uint8Array(width * height);
      for (const o of clean.objectsAt(t)) {
        const [x0, y0, x1, y1] = pixelBox(o.box, width, height, 2);
        for (let y = y0; y < y1; y++) allowed.fill(1, y * width + x0, y * width + x1);
      }
      for (let i = 0; i < full.length; i++) if (!allowed[i] && full[i] !== empty[i]) throw new Error(`t=${t}: pixel ${i} differs away from every person`);
    }
    // Two empty frames outside the sun patch differ by the global light only: one ratio fits every
    // pixel to rounding, also where people were drawn in either frame.
    const [t1, t2] = [0, 250];
    expect(clean.sunPatchAt(t1) || clean.sunPatchAt(t2)).toBe(false);
    const e1 = clean.emptyFrameAt(t1).data.slice();
    const e2 = clean.emptyFrameAt(t2).data;
    const quotients = Array.from(e1, (v, i) => v / e2[i]).filter((q) => Number.isFinite(q)).sort((a, b) => a - b);
    const gain = quotients[Math.floor(quotients.length / 2)];
    let worst = 0;
    for (let i = 0; i < e1.length; i++) if (e1[i] < 255 && e2[i] < 255) worst = Math.max(worst, Math.abs(e1[i] - gain * e2[i]));
    expect(worst).toBeLessThan(1.6);
    // The same comparison sees the people in frameAt (so it could fail).
    const f1 = clean.frameAt(t1).frame.data;
    let seen = 0;
    for (let i = 0; i < f1.length; i++) if (Math.abs(f1[i] - gain * e2[i]) > 5) seen++;
    expect(seen).toBeGreaterThan(200);
  });

  it('lights the façade with a sun patch 1.3–1.6 times as bright at the stated times, in frameAt and emptyFrameAt alike', () => {
    const clean = createPlaza({ noise: 0 });
    // Default: 60 s of patch from 60 s into every 300 s (10 fps).
    const on = (t: number) => clean.sunPatchAt(t);
    expect([0, 599, 600, 601, 900, 1199, 1200, 2999].map(on)).toEqual([false, false, false, true, true, true, false, false]);
    expect([3601, 3900, 6900].map(on)).toEqual([true, true, true]);
    expect(clean.lightingPeriod).toBe(3000);
    const none = createPlaza({ sunPatchBoost: 0 });
    expect([600, 900, 1100].some((t) => none.sunPatchAt(t))).toBe(false);
    const moved = createPlaza({ sunPatchFirst: 10, sunPatchSeconds: 20, sunPatchEvery: 100 });
    expect([50, 150, 350, 1150].map((t) => moved.sunPatchAt(t))).toEqual([false, true, false, true]);

    const block = 8;
    const { width, height } = clean;
    /** Ratios of block means of a over b, with the global light taken out by the paving's ratio in empty frames. */
    const blockRatios = (a: GreyFrame, b: GreyFrame, ta: number, tb: number, rows: [number, number]) => {
      const light = meanOver(clean.emptyFrameAt(ta), [0, 0.3, 1, 1]) / meanOver(clean.emptyFrameAt(tb), [0, 0.3, 1, 1]);
      const out: Array<{ x: number; r: number }> = [];
      for (let y = Math.round(rows[0] * height); y + block <= Math.round(rows[1] * height); y += block) {
        for (let x = 0; x + block <= width; x += block) {
          const rect = [x / width, y / height, (x + block) / width, (y + block) / height];
          out.push({ x: (x + block / 2) / width, r: meanOver(a, rect) / meanOver(b, rect) / light });
        }
      }
      return out;
    };
    const [before, during] = [500, 900];
    for (const kind of ['empty', 'people'] as const) {
      const frame = (t: number) => (kind === 'empty' ? clean.emptyFrameAt(t) : clean.frameAt(t).frame);
      // Rows 0.02–0.15: façade above every person's head (the farthest are 0.074 tall at row 0.25).
      const facade = blockRatios(frame(during), frame(before), during, before, [0.02, 0.15]);
      const peak = Math.max(...facade.map((b) => b.r));
      expect(peak, kind).toBeGreaterThan(1.3);
      expect(peak, kind).toBeLessThan(1.6);
      expect(facade.filter((b) => b.r > 1.2).length / facade.length, kind).toBeGreaterThan(0.1);
      expect(facade.filter((b) => b.r < 1.02).length / facade.length, kind).toBeGreaterThan(0.3); // a patch, not the whole façade
    }
    // The paving keeps its light; the patch slides between the start and the end of its minute.
    expect(blockRatios(clean.emptyFrameAt(during), clean.emptyFrameAt(before), during, before, [0.3, 1]).every((b) => Math.abs(b.r - 1) < 0.02)).toBe(true);
    const centre = (t: number) => {
      const blocks = blockRatios(clean.emptyFrameAt(t), clean.emptyFrameAt(before), t, before, [0.02, 0.15]);
      const w = blocks.map((b) => Math.max(0, b.r - 1));
      return blocks.reduce((a, b, k) => a + b.x * w[k], 0) / w.reduce((a, v) => a + v, 0);
    };
    expect(Math.abs(centre(700) - centre(1100))).toBeGreaterThan(0.02);
  });

  it('drifts the global light by a few percent over tens of seconds, repeating with the lighting period, with sensor noise of about 2.5 levels', () => {
    const clean = createPlaza({ noise: 0 });
    const paving = [0, 0.3, 1, 1];
    const means: number[] = [];
    for (let t = 0; t < clean.lightingPeriod; t += 20) means.push(meanOver(clean.emptyFrameAt(t), paving));
    const lo = Math.min(...means);
    const hi = Math.max(...means);
    expect((hi - lo) / ((hi + lo) / 2)).toBeGreaterThan(0.03);
    expect((hi - lo) / ((hi + lo) / 2)).toBeLessThan(0.16);
    // Tens of seconds: within 20 s (10 samples) the light moves by at least a percent somewhere.
    expect(means.some((m, k) => k >= 10 && Math.abs(m - means[k - 10]) / m > 0.01)).toBe(true);
    expect(sameData(clean.emptyFrameAt(17), clean.emptyFrameAt(17 + clean.lightingPeriod))).toBe(true);
    const flat = createPlaza({ noise: 0, cloudDrift: 0, sunPatchBoost: 0 });
    expect(sameData(flat.emptyFrameAt(17), flat.emptyFrameAt(1234))).toBe(true);

    // 8-bit grey levels, and noise of the stated size drawn independently for the empty frame.
    let s2 = 0;
    let n = 0;
    for (const t of [10, 1000, 2000]) {
      const noisy = scene.emptyFrameAt(t).data;
      const bare = clean.emptyFrameAt(t).data;
      for (let i = 0; i < noisy.length; i++) {
        const v = noisy[i];
        if (!(Number.isInteger(v) && v >= 0 && v <= 255)) throw new Error(`t=${t}: grey level ${v}`);
        if (bare[i] > 5 && bare[i] < 250) {
          s2 += (v - bare[i]) ** 2;
          n++;
        }
      }
      for (const v of scene.frameAt(t).frame.data) if (!(Number.isInteger(v) && v >= 0 && v <= 255)) throw new Error(`t=${t}: grey level ${v}`);
    }
    expect(Math.sqrt(s2 / n)).toBeGreaterThan(2.2);
    expect(Math.sqrt(s2 / n)).toBeLessThan(2.8);
  });

  it('validates its options, naming the field', () => {
    expect(() => createPlaza({ width: 10 })).toThrow(/width/);
    expect(() => createPlaza({ height: 5000 })).toThrow(/height/);
    expect(() => createPlaza({ seed: 0.5 })).toThrow(/seed/);
    expect(() => createPlaza({ noise: -1 })).toThrow(/noise/);
    expect(() => createPlaza({ frameRate: 0 })).toThrow(/frameRate/);
    expect(() => createPlaza({ meanPeople: 0 })).toThrow(/meanPeople/);
    expect(() => createPlaza({ groupShare: 1.5 })).toThrow(/groupShare/);
    expect(() => createPlaza({ farShare: -0.1 })).toThrow(/farShare/);
    expect(() => createPlaza({ horizon: 0.3 })).toThrow(/horizon/);
    expect(() => createPlaza({ nearHeight: 0.9 })).toThrow(/nearHeight/);
    expect(() => createPlaza({ cloudDrift: 0.5 })).toThrow(/cloudDrift/);
    expect(() => createPlaza({ sunPatchEvery: 10 })).toThrow(/sunPatchEvery/);
    expect(() => createPlaza({ sunPatchFirst: 300 })).toThrow(/sunPatchFirst/);
    expect(() => createPlaza({ sunPatchSeconds: 400 })).toThrow(/sunPatchSeconds/);
    expect(() => createPlaza({ sunPatchBoost: 2 })).toThrow(/sunPatchBoost/);
    expect(() => createPlaza({ standSeconds: 4000 })).toThrow(/standSeconds/);
    expect(() => createPlaza({ standSeconds: 300, standEvery: 320 })).toThrow(/standEvery/);
    expect(() => createPlaza({ shadows: 'yes' as unknown as boolean })).toThrow(/shadows/);
  });
});
