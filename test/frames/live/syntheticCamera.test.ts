import { describe, expect, it } from 'vitest';
import { syntheticCamera } from '../../../src/frames/live/syntheticCamera.ts';
import { createScene } from '../../../src/frames/synthetic/index.ts';
import { activeHandles, expectReleased, manualClock, record, waitFor } from './liveFixtures.ts';

const scene = createScene('reading-room', { width: 96, height: 72, seed: 3 });

describe('syntheticCamera', () => {
  it('renders frame t = floor(elapsed · frameRate · speed) as the clock goes, with its truth', async () => {
    const clock = manualClock(1_000_000);
    const camera = syntheticCamera(scene, { id: 'demo', clock });
    const seen = record();
    camera.start(seen.handlers);
    expect(camera.truth()).toEqual(scene.frameAt(0).truth);
    clock.advance(1000); // 10 fps: frames 0..10
    expect(seen.log.slice(0, 2)).toEqual(['connecting', 'online']);
    expect(seen.frames.map((f) => f.capturedAt - 1_000_000)).toEqual([0, 100, 200, 300, 400, 500, 600, 700, 800, 900, 1000]);
    expect(camera.frameIndex()).toBe(10);
    // check: the scene's own rendering of the same frame index (it is deterministic per index).
    expect(Array.from(seen.frames[7].frame.data)).toEqual(Array.from(scene.frameAt(7).frame.data));
    expect(camera.truth()).toEqual(scene.frameAt(10).truth);
    await camera.stop();
    expect(clock.pending()).toBe(0);
    clock.advance(1000);
    expect(seen.frames).toHaveLength(11);
  });

  it('plays faster with speed, skipping no index while it keeps up', async () => {
    const clock = manualClock();
    const camera = syntheticCamera(scene, { id: 'fast', speed: 4, clock });
    const seen = record();
    camera.start(seen.handlers);
    clock.advance(1000);
    await camera.stop();
    expect(seen.frames).toHaveLength(41); // 40 fps
    expect(camera.frameIndex()).toBe(40);
  });

  it('simulates an outage: offline, no frames, then online again with the scene time gone on', async () => {
    const clock = manualClock();
    const camera = syntheticCamera(scene, { id: 'out', clock, outages: [{ fromMs: 300, toMs: 600 }] });
    const seen = record();
    camera.start(seen.handlers);
    clock.advance(1000);
    await camera.stop();
    expect(seen.log).toEqual(['connecting', 'online', 'frame', 'frame', 'frame', 'offline', 'online', 'frame', 'frame', 'frame', 'frame', 'frame']);
    expect(seen.statuses[2].detail).toMatchObject({ reason: 'simulated outage', retryInMs: 300 });
    expect(seen.frames.map((f) => f.capturedAt)).toEqual([0, 100, 200, 600, 700, 800, 900, 1000]);
  });

  it('runs on the real clock and leaves no timer after stop', async () => {
    const before = activeHandles();
    const camera = syntheticCamera(scene, { id: 'real', speed: 5 });
    const seen = record();
    camera.start(seen.handlers);
    await waitFor(() => seen.frames.length >= 5, 'five frames');
    await camera.stop();
    await expectReleased(before);
    expect(seen.frames.every((f) => f.frame.width === 96 && f.frame.height === 72)).toBe(true);
  });

  it('validates its options naming the field', () => {
    expect(() => syntheticCamera(scene, { id: 'a', speed: 0 })).toThrow(/speed/);
    expect(() => syntheticCamera(scene, { id: 'a', outages: [{ fromMs: 5, toMs: 5 }] })).toThrow(/outages\[0\]/);
  });
});
