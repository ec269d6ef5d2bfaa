import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createReadingRoom } from '../../src/frames/synthetic/index.ts';
import { jsonOf, READING_ROOM_ZONES, startTestService, type TestService } from './testService.ts';

// Reference people (a zone's `perspective`) through the zones API, and the person size learned
// from people seen alone, on the real service with the synthetic reading room (speed 10, 160×120).
let t: TestService;
const CAMERA = 'reading-room';
const url = () => `${t.base}/api/cameras/${CAMERA}/zones`;
const put = (body: unknown, key: string | null = t.adminKey) =>
  fetch(url(), {
    method: 'PUT',
    headers: { 'Content-Type': 'application/json', ...(key && { Authorization: `Bearer ${key}` }) },
    body: JSON.stringify(body),
  });

beforeAll(async () => {
  t = await startTestService();
});
afterAll(async () => {
  await t?.stop();
});

/** The entrance zone with the given references. */
const entrance = (perspective: unknown) => ({ ...READING_ROOM_ZONES[0], perspective });
const others = READING_ROOM_ZONES.slice(1);
/** Two boxes: a farther person (feet at row 0.7, 0.05 wide, 0.12 tall) and a nearer one (row 0.95, 0.07 × 0.18). */
const boxes = [
  { x: 0.12, y: 0.7, area: 0.006, height: 0.12 },
  { x: 0.2, y: 0.95, area: 0.0126, height: 0.18 },
];

describe('reference people through PUT /api/cameras/:id/zones', () => {
  it('stores boxes, returns them and records the change', async () => {
    const res = await put({ zones: [entrance(boxes), ...others] });
    expect(res.status).toBe(200);
    expect((await jsonOf(res)).zones[0].perspective).toEqual(boxes);
    expect((await jsonOf(await fetch(url()))).zones[0].perspective).toEqual(boxes);
    // persisted: the store's copy, and a history row for the field
    expect(t.service.store.getZone(CAMERA, 'entrance')!.zone.perspective).toEqual(boxes);
    const history = (await jsonOf(await fetch(`${url()}/history`))).history;
    expect(history).toContainEqual(expect.objectContaining({ zone: 'entrance', field: 'perspective', old: null, new: boxes }));
    // references without a box (foot row and area only) are still accepted, mixed with boxes
    const plain = [{ y: 0.65, area: 0.005 }, boxes[1]];
    expect((await put({ zones: [entrance(plain), ...others] })).status).toBe(200);
    expect(t.service.store.getZone(CAMERA, 'entrance')!.zone.perspective).toEqual(plain);
    // removing the field removes the references
    expect((await put({ zones: READING_ROOM_ZONES })).status).toBe(200);
    expect(t.service.store.getZone(CAMERA, 'entrance')!.zone.perspective).toBeUndefined();
  });

  it('applies them to counting at once', async () => {
    // References that make one person tiny (0.0002 and 0.0003 of the frame, where a person's blob
    // covers about 0.008): anyone in the entrance then counts as dozens of people. With its own
    // person area the entrance (capacity 4) never shows 10.
    const tiny = [{ x: 0.1, y: 0.6, area: 0.0002, height: 0.02 }, { x: 0.1, y: 0.98, area: 0.0003, height: 0.03 }];
    expect((await put({ zones: [entrance(tiny), ...others] })).status).toBe(200);
    try {
      let count = 0;
      // Visitors come in through the entrance all the time; the test's timeout bounds the wait.
      while (count < 10) {
        await new Promise((r) => setTimeout(r, 200));
        const live = await jsonOf(await fetch(`${t.base}/api/live`));
        count = live.cameras[0].zones.find((z: { id: string }) => z.id === 'entrance').count;
      }
      expect(count).toBeGreaterThanOrEqual(10);
    } finally {
      expect((await put({ zones: READING_ROOM_ZONES })).status).toBe(200);
    }
  });

  it.each([
    ['one box', [boxes[0]], /^request body: zones\[0\]\.perspective must be a list of at least 2 reference people/],
    ['two boxes with the feet on one row', [boxes[0], { ...boxes[1], y: 0.7 }], /zones\[0\]\.perspective needs reference people at two or more different heights/],
    ['feet 0.01 apart', [boxes[0], { ...boxes[1], y: 0.71 }], /zones\[0\]\.perspective needs reference people whose feet are at least 0\.02 of the frame height apart/],
    ['a box above the top of the frame', [boxes[0], { x: 0.5, y: 0.1, area: 0.01, height: 0.2 }], /zones\[0\]\.perspective\[1\] is a box reaching above the top of the frame/],
    ['a box past the right edge', [boxes[0], { x: 0.98, y: 0.9, area: 0.01, height: 0.2 }], /zones\[0\]\.perspective\[1\] is a box reaching past the right edge of the frame/],
    ['a box past the left edge', [{ x: 0.01, y: 0.6, area: 0.01, height: 0.2 }, boxes[1]], /zones\[0\]\.perspective\[0\] is a box reaching past the left edge/],
    ['x without height', [boxes[0], { x: 0.3, y: 0.9, area: 0.01 }], /zones\[0\]\.perspective\[1\] needs both x and height \(a box\) or neither/],
    ['a height of 0', [boxes[0], { x: 0.3, y: 0.9, area: 0.01, height: 0 }], /zones\[0\]\.perspective\[1\]\.height must be the box height as a fraction of the frame height from 0\.005 to 1, got 0/],
    ['an area above 1', [boxes[0], { y: 0.9, area: 2 }], /zones\[0\]\.perspective\[1\]\.area must be a fraction of the frame area from 0\.00005 to 0\.5, got 2/],
    ['a foot row given as text', [boxes[0], { y: '0.9', area: 0.01 }], /zones\[0\]\.perspective\[1\]\.y must be the foot row in 0\.\.1, got "0\.9"/],
    ['x off the frame', [boxes[0], { x: -0.2, y: 0.9, area: 0.01, height: 0.2 }], /zones\[0\]\.perspective\[1\]\.x must be the foot point's x in 0\.\.1/],
    ['an unknown field', [boxes[0], { ...boxes[1], width: 0.07 }], /zones\[0\]\.perspective\[1\]\.width is not a reference field \(known: x, y, area, height\)/],
    ['a reference that is not an object', [boxes[0], 0.9], /zones\[0\]\.perspective\[1\] must be \{y, area\} or a box \{x, y, area, height\}/],
    ['101 references', Array.from({ length: 101 }, (_, i) => ({ y: 0.5 + i / 400, area: 0.005 })), /zones\[0\]\.perspective has 101 reference people; at most 100/],
  ])('refuses %s with a 400 naming the field, and changes nothing', async (_what, perspective, message) => {
    const before = await jsonOf(await fetch(url()));
    const res = await put({ zones: [entrance(perspective), ...others] });
    expect(res.status).toBe(400);
    expect((await jsonOf(res)).error).toMatch(message);
    expect(await jsonOf(await fetch(url()))).toEqual(before);
    expect(t.service.store.getZone(CAMERA, 'entrance')!.zone).toEqual(before.zones[0]);
  });

  it('refuses a change without the admin key', async () => {
    const res = await put({ zones: [entrance(boxes), ...others] }, null);
    expect(res.status).toBe(401);
    expect(t.service.store.getZone(CAMERA, 'entrance')!.zone.perspective).toBeUndefined();
  });
});

describe('GET /api/cameras/:id/person-size', () => {
  it('answers 404 for an unknown camera', async () => {
    const res = await fetch(`${t.base}/api/cameras/nope/person-size`);
    expect(res.status).toBe(404);
    expect((await jsonOf(res)).error).toBe('no camera "nope"');
  });

  it('says how far learning got, and once ready gives a person size the synthetic scene can have', async () => {
    const size = () => fetch(`${t.base}/api/cameras/${CAMERA}/person-size`).then(jsonOf);
    let s = await size();
    expect(s.camera).toBe(CAMERA);
    expect(['ready', 'too-few', 'rows-not-spread']).toContain(s.state);
    // Bounded: at most 16 bands of 32 observations.
    expect(s.observations).toBeLessThanOrEqual(512);
    // The scene plays at 10×: people seen alone pile up within seconds (the test's timeout bounds the wait).
    while (s.state !== 'ready') {
      expect(typeof s.message).toBe('string');
      await new Promise((r) => setTimeout(r, 500));
      s = await size();
    }
    expect(s.message).toMatch(/^learned from \d+ of the \d+ people seen alone that are kept$/);
    expect(s.supporting).toBeGreaterThanOrEqual(30);
    expect(s.supporting).toBeLessThanOrEqual(s.observations);
    expect(s.seen).toBeGreaterThanOrEqual(s.observations);
    expect(s.rows[0]).toBeGreaterThanOrEqual(0);
    expect(s.rows[1]).toBeLessThanOrEqual(1);
    expect(s.rows[1] - s.rows[0]).toBeGreaterThanOrEqual(0.1);
    // check: the synthetic scene's own person sizes. It draws everyone at one size (no perspective),
    // seated people smaller than standing ones; blobs come out somewhat larger than the drawn shape
    // (the threshold's 3×3 mean and the closing grow them by about a pixel all round). So at every
    // row in the fitted band the learned area lies between the seated and 2.5 × the standing area.
    const scene = createReadingRoom({ width: 160, height: 120 });
    const standing = scene.zones.find((z) => z.id === 'entrance')!.personArea!;
    const seated = scene.zones.find((z) => z.id === 'tables')!.personArea!;
    for (const y of [s.rows[0], (s.rows[0] + s.rows[1]) / 2, s.rows[1]]) {
      const area = (s.intercept + s.slope * y) ** 2;
      expect(area).toBeGreaterThan(seated);
      expect(area).toBeLessThan(2.5 * standing);
    }
    // Box proportions of a person, as shares of the frame's height and width (4:3): taller than wide.
    expect(s.aspect).toBeGreaterThan(1);
    expect(s.aspect).toBeLessThan(6);
  });
});
