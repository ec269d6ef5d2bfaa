import { describe, expect, it } from 'vitest';
import { createReadingRoom } from '../../src/frames/synthetic/readingRoom.ts';
import { withSlowDrift } from '../../src/frames/synthetic/slowDrift.ts';

// Our own invented scene (no outside source): the drift field is checked against its definition
// in the module comment of src/frames/synthetic/slowDrift.ts.

describe('withSlowDrift', () => {
  const base = createReadingRoom({ width: 160, height: 120, noise: 0 });
  const beam = { from: [0.3, 0.8], to: [0.7, 0.8], size: [0.2, 0.2], slant: 0, softness: 0.05, boost: 0.5 } as const;

  it('is the base scene before the drift starts, with the same truth and objects', () => {
    const scene = withSlowDrift(base, { start: 100, duration: 1000, beam });
    expect(Array.from(scene.frameAt(50).frame.data)).toEqual(Array.from(base.frameAt(50).frame.data));
    expect(scene.frameAt(700).truth).toEqual(base.frameAt(700).truth);
    expect(scene.objectsAt(700)).toEqual(base.objectsAt(700));
    expect(scene.zones).toBe(base.zones);
  });

  it('brightens the window side and the sunbeam as the module comment says', () => {
    const scene = withSlowDrift(base, { start: 0, duration: 1000, window: 0.2, beam });
    const t = 500; // p = ½: window ramp 0.2·s(½) = 0.1, beam at full boost, centred on (0.5, 0.8)
    const lit = scene.emptyFrameAt(t).data;
    const dark = base.emptyFrameAt(t).data;
    const at = (x: number, y: number) => Math.floor(y * 120) * 160 + Math.floor(x * 160);
    // Beam centre (x = 0.5 → window term 0.1 · 0.5): factor 1 + 0.05 + 0.5.
    const centre = at(0.5, 0.8);
    expect(lit[centre]).toBeCloseTo(Math.round(dark[centre] * 1.55), -0.5);
    // Outside the beam, at the left edge of the frame: 1 + 0.1 · (1 − x).
    const left = at(0.01, 0.2);
    expect(lit[left]).toBeCloseTo(Math.round(dark[left] * (1 + 0.1 * (1 - (Math.floor(0.01 * 160) + 0.5) / 160))), -0.5);
    // The right edge is untouched.
    const right = (Math.floor(0.2 * 120) + 1) * 160 - 1;
    expect(lit[right]).toBe(dark[right]);
  });

  it('renders frame t the same whatever was rendered before, noise included', () => {
    const scene = withSlowDrift(base, { start: 0, duration: 1000, noise: 2.5, beam });
    const first = Float32Array.from(scene.frameAt(321).frame.data);
    scene.frameAt(10);
    scene.emptyFrameAt(321);
    expect(Array.from(scene.frameAt(321).frame.data)).toEqual(Array.from(first));
    // Another seed draws other noise.
    const a = scene.emptyFrameAt(321).data;
    const b = withSlowDrift(base, { start: 0, duration: 1000, noise: 2.5, beam, seed: 2 }).emptyFrameAt(321).data;
    let same = 0;
    for (let i = 0; i < a.length; i++) same += a[i] === b[i] ? 1 : 0;
    expect(same / a.length).toBeLessThan(0.5);
  });

  it('names the option in its errors', () => {
    expect(() => withSlowDrift(base, { duration: 0 })).toThrow(/duration must be a whole number ≥ 1/);
    expect(() => withSlowDrift(base, { noise: 60 })).toThrow(/noise must be in 0..50/);
    expect(() => withSlowDrift(base, { beam: { ...beam, boost: 3 } })).toThrow(/beam.boost/);
  });
});
