import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { beforeAll, describe, expect, it } from 'vitest';
import { createCounter } from '../../src/counting/createCounter.ts';
import type { GreyFrame } from '../../src/domain/frame.ts';
import { readVideo } from '../../src/frames/readVideo.ts';
import { distinctFrames } from '../../src/vision/distinctFrames.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';

// check: real video, tree.avi from Debian's opencv-doc package (OpenCV's sample data): a waving
// tree with nobody in view, then a hand enters near the end. Frame numbers are on the video's
// constant-rate timeline (449 frames at 15 fps); `npm run testdata` fetches the file.
const file = fileURLToPath(new URL('../data/tree.avi', import.meta.url));

describe('tree.avi (real video)', () => {
  const frames: GreyFrame[] = [];
  beforeAll(async () => {
    if (!existsSync(file)) throw new Error(`${file} is missing: run \`npm run testdata\` first`);
    for await (const item of readVideo(file, { timing: 'constant-rate' })) {
      if (item.error) throw item.error;
      frames.push(item.frame);
    }
  });

  it('counts nobody in the empty tree scene and sees the hand', () => {
    expect(frames.length).toBeGreaterThanOrEqual(449);
    const learning = distinctFrames(frames.slice(0, 200).map((f) => f.data));
    const model = fitSubspace(learning, frames[0]);
    const counter = createCounter(model);
    const totals = frames.map((f) => counter.count(f).total);
    const empty = totals.slice(200, 341);
    const hand = totals.slice(370, 449);
    const emptyShare = empty.filter((t) => t === 0).length / empty.length;
    const handShare = hand.filter((t) => t > 0).length / hand.length;
    console.log(`tree.avi: ${learning.length} distinct learning frames, k = ${model.components}; ` +
      `frames 200–340 with total 0: ${(emptyShare * 100).toFixed(1)} %; frames 370–448 with a blob: ${(handShare * 100).toFixed(1)} %`);
    expect(emptyShare).toBeGreaterThanOrEqual(0.95);
    expect(handShare).toBeGreaterThanOrEqual(0.9);
  });
});
