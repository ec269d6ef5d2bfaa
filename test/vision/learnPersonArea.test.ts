import { describe, expect, it } from 'vitest';
import { createReadingRoom, random, type SceneObject } from '../../src/frames/synthetic/index.ts';
import { fitPersonArea } from '../../src/vision/fitPersonArea.ts';
import { learnPersonArea, type PersonObservation } from '../../src/vision/learnPersonArea.ts';

/** The camera of the invented observations: the horizon at row 0.1 of the frame. */
const HORIZON = 0.1;
/** Scale of a person whose feet are at row y, for a pinhole camera over a flat floor (fitPersonArea's model). */
const scale = (y: number) => (y - HORIZON) / (1 - HORIZON);

/**
 * Blobs as the camera pipeline would gather them, from the synthetic reading room's truth (our
 * invented scene): every standing person or pair in every 97th frame of the visit schedule. The
 * scene draws people at one size, so the perspective of a camera with the horizon at row 0.1 is
 * put on top: a person with feet at row y covers standingArea · scale(y)², times a log-normal
 * measurement error of 4 % in √area. A pair walking close together (a third of the visitors)
 * makes one blob: its union box at the fill of one person's shape, about 1.85 person areas —
 * the outliers. Seated people are left out: they are another size.
 */
function observations(seed: number): { list: (PersonObservation & { pair: boolean })[]; standingArea: number } {
  const scene = createReadingRoom({ seed });
  const standingArea = scene.zones.find((z) => z.id === 'entrance')!.personArea!;
  const noise = random(seed, 77);
  const list: (PersonObservation & { pair: boolean })[] = [];
  for (let t = 0; t < scene.schedulePeriod; t += 97) {
    const groups = new Map<string, SceneObject[]>();
    for (const o of scene.objectsAt(t)) {
      if (o.posture !== 'standing') continue;
      const key = o.group ?? o.id;
      groups.set(key, [...(groups.get(key) ?? []), o]);
    }
    for (const members of groups.values()) {
      const [x0, y0, x1, y1] = [0, 1, 2, 3].map((k) => (k < 2 ? Math.min : Math.max)(...members.map((m) => m.box[k])));
      if (x0 < 0 || x1 > 1 || y0 < 0 || y1 > 1) continue; // cut off by the frame edge
      const one = members[0].box;
      const area = (standingArea * ((x1 - x0) * (y1 - y0))) / ((one[2] - one[0]) * (one[3] - one[1]));
      list.push({ y: y1, area: area * scale(y1) ** 2 * Math.exp(2 * noise.normal(0, 0.04)), pair: members.length > 1 });
    }
  }
  return { list, standingArea };
}

describe('learnPersonArea', () => {
  it.each([1, 2, 3])('recovers the true line from the synthetic room with merged pairs (seed %i), where least squares is pulled off', (seed) => {
    const { list, standingArea } = observations(seed);
    const pairs = list.filter((o) => o.pair).length;
    // The scene has enough of both: hundreds of blobs, a quarter to a half of them pairs.
    expect(list.length).toBeGreaterThan(300);
    expect(pairs / list.length).toBeGreaterThan(0.25);
    expect(pairs / list.length).toBeLessThan(0.5);
    // check: the pinhole line √area = √A·(y − h)/(1 − h) that made the observations (fitPersonArea's model)
    const trueSlope = Math.sqrt(standingArea) / (1 - HORIZON);
    const trueIntercept = (-HORIZON * Math.sqrt(standingArea)) / (1 - HORIZON);
    const learned = learnPersonArea(list);
    if (!learned.ok) throw new Error(learned.message);
    const plain = fitPersonArea(list);
    // Stated tolerance: slope within 3 %, intercept within 0.1 √A, expected area within 5 % over rows 0.45–0.9.
    expect(Math.abs(learned.slope / trueSlope - 1)).toBeLessThan(0.03);
    expect(Math.abs(learned.intercept - trueIntercept)).toBeLessThan(0.1 * Math.sqrt(standingArea));
    for (const y of [0.45, 0.7, 0.9]) expect(Math.abs(learned.model.areaAt(y) / (standingArea * scale(y) ** 2) - 1)).toBeLessThan(0.05);
    // Least squares on the same observations is pulled towards the pairs by more than 10 % in slope and 15 % in area.
    expect(plain.slope / trueSlope - 1).toBeGreaterThan(0.1);
    expect(plain.areaAt(0.7) / (standingArea * scale(0.7) ** 2) - 1).toBeGreaterThan(0.15);
    // The pairs are what it set aside: at least 90 % of them, and at most 5 % of the single people.
    const rejectedPairs = list.filter((o, i) => o.pair && !learned.inliers[i]).length;
    const rejectedSingles = list.filter((o, i) => !o.pair && !learned.inliers[i]).length;
    expect(rejectedPairs / pairs).toBeGreaterThan(0.9);
    expect(rejectedSingles / (list.length - pairs)).toBeLessThan(0.05);
    expect(learned.supporting).toBe(learned.inliers.reduce((s, v) => s + v, 0));
    expect(learned.observations).toBe(list.length);
    expect(learned.rows[0]).toBeGreaterThanOrEqual(0.4);
    expect(learned.rows[1]).toBeLessThanOrEqual(1);
  });

  it('gives the exact line through clean people and sets twice-as-large pairs aside (the example in its doc comment)', () => {
    const people = Array.from({ length: 40 }, (_, i) => 0.4 + (0.55 * i) / 39).map((y) => ({ y, area: (0.1 * y) ** 2 }));
    const pairs = Array.from({ length: 12 }, (_, i) => 0.4 + (0.55 * i) / 11).map((y) => ({ y, area: 2 * (0.1 * y) ** 2 }));
    const learned = learnPersonArea([...people, ...pairs]);
    if (!learned.ok) throw new Error(learned.message);
    expect(learned.slope).toBeCloseTo(0.1, 10);
    expect(learned.intercept).toBeCloseTo(0, 10);
    expect(learned.supporting).toBe(40);
    expect([...learned.inliers.slice(40)]).toEqual(new Array(12).fill(0));
    // Least squares on all of them, by hand from the normal equations (fitPersonArea), is about 0.110·y − 0.0006.
    const plain = fitPersonArea([...people, ...pairs]);
    expect(plain.slope).toBeCloseTo(0.1104, 3);
  });

  it('says why when it cannot learn: too few people, or all at one distance', () => {
    const few = Array.from({ length: 29 }, (_, i) => ({ y: 0.4 + i / 50, area: 0.004 }));
    expect(learnPersonArea(few)).toMatchObject({ ok: false, reason: 'too-few', observations: 29, message: '29 people seen alone so far; 30 are needed' });
    expect(learnPersonArea(few, { minObservations: 10 })).toMatchObject({ ok: true, supporting: 29 });
    const oneRow = Array.from({ length: 50 }, (_, i) => ({ y: 0.7, area: 0.004 + i * 1e-5 }));
    expect(learnPersonArea(oneRow)).toMatchObject({ ok: false, reason: 'rows-not-spread' });
    // Spread over rows 0.70–0.76 only: the 10th–90th percentile band is narrower than 0.1.
    const narrow = Array.from({ length: 50 }, (_, i) => ({ y: 0.7 + (i % 7) / 100, area: 0.004 }));
    const result = learnPersonArea(narrow);
    expect(result).toMatchObject({ ok: false, reason: 'rows-not-spread' });
    expect(!result.ok && result.message).toMatch(/within rows 0\.70–0\.76/);
    expect(learnPersonArea(narrow, { minRowSpread: 0.05 }).ok).toBe(true);
    // 40 blobs but only 25 single people on one line; the 15 pairs are set aside, leaving fewer than 30.
    const mixed = Array.from({ length: 40 }, (_, i) => ({ y: 0.4 + i / 80, area: (i < 25 ? 1 : 2) * (0.1 * (0.4 + i / 80)) ** 2 }));
    expect(learnPersonArea(mixed)).toMatchObject({ ok: false, reason: 'too-few', supporting: 25, message: 'only 25 of 40 people seen alone agree on one size; 30 are needed' });
  });

  it('names the observation or option that is out of range, and leaves its input alone', () => {
    const ok = Array.from({ length: 30 }, (_, i) => ({ y: 0.3 + i / 50, area: 0.003 }));
    expect(() => learnPersonArea([...ok, { y: 1.2, area: 0.003 }])).toThrow('observations[30].y must be the foot row in 0..1, got 1.2');
    expect(() => learnPersonArea([...ok, { y: 0.5, area: 0 }])).toThrow('observations[30].area must be a fraction of the frame area in (0, 1], got 0');
    expect(() => learnPersonArea(ok, { minObservations: 1 })).toThrow(/options\.minObservations/);
    expect(() => learnPersonArea(ok, { cutoff: 0 })).toThrow(/options\.cutoff/);
    const copy = JSON.stringify(ok);
    learnPersonArea(ok);
    expect(JSON.stringify(ok)).toBe(copy);
  });
});
