import { Worker } from 'node:worker_threads';
import { describe, expect, it } from 'vitest';
import { sharedMask } from '../../src/counting/sharedMask.ts';

describe('sharedMask', () => {
  it('has nothing before the first write, then a copy of the last mask, and nothing after clear()', () => {
    const shared = sharedMask({ width: 3, height: 2 });
    expect(shared.read()).toBeUndefined();
    shared.write({ width: 3, height: 2, data: Uint8Array.from([1, 0, 0, 0, 1, 1]) });
    const first = shared.read()!;
    expect(first).toEqual({ width: 3, height: 2, data: Uint8Array.from([1, 0, 0, 0, 1, 1]) });
    first.data.fill(0); // a copy: changing it changes nothing shared
    expect(Array.from(shared.read()!.data)).toEqual([1, 0, 0, 0, 1, 1]);
    shared.clear();
    expect(shared.read()).toBeUndefined();
  });

  it('is seen through another view of the same buffer (as by another thread)', () => {
    const writer = sharedMask({ width: 2, height: 2 });
    const reader = sharedMask({ width: 2, height: 2 }, { buffer: writer.buffer });
    writer.write({ width: 2, height: 2, data: Uint8Array.from([0, 1, 1, 0]) });
    expect(Array.from(reader.read()!.data)).toEqual([0, 1, 1, 0]);
  });

  it('names the field of a wrong size, buffer or mask', () => {
    expect(() => sharedMask({ width: 0, height: 2 })).toThrow(/^size: expected whole width and height ≥ 1, got 0×2$/);
    expect(() => sharedMask({ width: 2, height: 2 }, { buffer: new SharedArrayBuffer(4) })).toThrow(/^buffer: expected a SharedArrayBuffer of 12 bytes, got 4 bytes$/);
    expect(() => sharedMask({ width: 2, height: 2 }).write({ width: 2, height: 1, data: new Uint8Array(2) })).toThrow(/^mask: expected 2×2, got 2×1$/);
  });

  it('never hands out a mask torn between two writes of another thread', async () => {
    // check: sequence lock as documented for the Linux kernel (Documentation/locking/seqlock.rst):
    // a reader retries while a write overlapped its copy, so it sees one whole write or another.
    // The writer alternates all-0 and all-1 masks, so a torn copy would hold both values.
    const width = 320;
    const height = 240;
    const shared = sharedMask({ width, height }, { readAttempts: 100_000 });
    const done = new SharedArrayBuffer(4);
    const worker = new Worker(new URL('../../src/counting/workerBootstrap.mjs', import.meta.url), {
      workerData: { module: new URL('./fixtures/maskWriter.ts', import.meta.url).href, buffer: shared.buffer, done, width, height, writes: 3000, pauseMs: 0.1 },
    });
    const exited = new Promise((resolve) => worker.once('exit', resolve));
    const flag = new Int32Array(done);
    let reads = 0;
    let torn = 0;
    const seen = new Set<number>();
    // Wait for the first write, then read as fast as possible until the writer is done.
    while (shared.read() === undefined && Atomics.load(flag, 0) === 0) await new Promise((r) => setImmediate(r));
    while (Atomics.load(flag, 0) === 0) {
      const mask = shared.read()!;
      reads++;
      let sum = 0;
      for (let i = 0; i < mask.data.length; i++) sum += mask.data[i];
      if (sum !== 0 && sum !== mask.data.length) torn++;
      seen.add(sum);
    }
    await exited;
    expect(reads).toBeGreaterThan(0);
    expect(torn).toBe(0);
    for (const sum of seen) expect([0, width * height]).toContain(sum);
  });
});
