import { describe, expect, it } from 'vitest';
import { createBlobFollower } from '../../src/counting/followBlobs.ts';
import type { Blob } from '../../src/vision/labelComponents.ts';
import { prepareZones } from '../../src/vision/prepareZones.ts';
import { tallyZones } from '../../src/vision/tallyZones.ts';
import { createMask } from '../../src/domain/frame.ts';

// A 100×100 view, one room zone over all of it, one person = 100 pixels.
const size = { width: 100, height: 100 };
const zones = prepareZones([{ id: 'room', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]], personArea: 0.01, minBlobArea: 0.002 }], size);
const empty = createMask(100, 100);
let label = 1;
function blob(x0: number, y0: number, w: number, h: number, area = w * h): Blob {
  return { label: label++, area, x0, y0, x1: x0 + w - 1, y1: y0 + h - 1, cx: x0 + w / 2, cy: y0 + h / 2, footX: x0 + (w - 1) / 2, footY: y0 + h - 1 };
}
/** Counts of the room zone over frames of blobs, plain and followed. */
function run(frames: Blob[][]): { plain: number[]; followed: number[] } {
  const follower = createBlobFollower(zones, size);
  const plain: number[] = [];
  const followed: number[] = [];
  for (const blobs of frames) {
    const tally = tallyZones(blobs, empty, zones);
    plain.push(tally.zones.room.count);
    followed.push(follower.tally(blobs, tally).zones.room.count);
  }
  return { plain, followed };
}

describe('createBlobFollower', () => {
  it('ignores a blob seen in one frame only, and bridges one missing frame', () => {
    // check: hand-made frames of our own; expected counts worked out by hand from the rules.
    const walker = (t: number) => blob(10 + 2 * t, 40, 5, 20);
    const frames = [0, 1, 2, 3, 4, 5, 6].map((t) => (t === 4 ? [] : [walker(t)]));
    frames[2] = [walker(2), blob(80, 80, 6, 6)]; // a flicker
    const { plain, followed } = run([[], ...frames]);
    expect(plain).toEqual([0, 1, 1, 2, 1, 0, 1, 1]);
    expect(followed).toEqual([0, 0, 1, 1, 1, 1, 1, 1]);
  });

  it('keeps the count of two people who walk into one blob, until they part again', () => {
    const frames: Blob[][] = [];
    for (let t = 0; t < 8; t++) frames.push([blob(10 + 3 * t, 40, 5, 20), blob(60 - 3 * t, 40, 5, 20)]);
    // Together: one blob of 1.3 person areas (they hide part of each other).
    for (let t = 0; t < 5; t++) frames.push([blob(33, 40, 10, 20, 130)]);
    for (let t = 0; t < 3; t++) frames.push([blob(28 - 3 * t, 40, 5, 20), blob(40 + 3 * t, 40, 5, 20)]);
    const { plain, followed } = run(frames);
    expect(plain.slice(8, 13)).toEqual([1, 1, 1, 1, 1]);
    expect(followed.slice(1)).toEqual(new Array(15).fill(2));
  });

  it('does not take two parts of one person that join again for two people', () => {
    const frames: Blob[][] = [];
    for (let t = 0; t < 8; t++) frames.push([blob(20, 20, 6, 8, 40), blob(20, 30, 6, 10, 50)]); // head and legs apart
    for (let t = 0; t < 4; t++) frames.push([blob(20, 20, 6, 20, 95)]);
    const { followed } = run(frames);
    expect(followed.slice(8)).toEqual([1, 1, 1, 1]);
  });

  it('validates its options, naming the field', () => {
    expect(() => createBlobFollower(zones, size, { confirmFrames: 0 })).toThrow(/confirmFrames/);
    expect(() => createBlobFollower(zones, size, { reach: -1 })).toThrow(/reach/);
  });
});
