import { afterEach, describe, expect, it } from 'vitest';
import { HALF, tempStore, type TempStore } from './tempStore.ts';

let t: TempStore | undefined;
afterEach(() => {
  t?.cleanup();
  t = undefined;
});

const T0 = Date.UTC(2026, 2, 2, 9, 0);
const s = (camera: string, zone: string, i: number) => ({ camera, zone, time: T0 + i * 10_000, intervalMs: 10_000, kind: 'count' as const, value: i % 5 });

describe('sample sequence numbers', () => {
  it('number each camera 1, 2, 3 … in commit order, never give a number twice, and roll back with a failed batch', () => {
    t = tempStore();
    const { store } = t;
    store.upsertCamera({ id: 'door' });
    store.upsertCamera({ id: 'hall' });
    for (const [camera, zone] of [['door', 'a'], ['door', 'b'], ['hall', 'a']]) store.upsertZone(camera, { id: zone, kind: 'room', polygon: HALF });
    store.insertSamples([s('door', 'a', 1), s('door', 'b', 1), s('hall', 'a', 1)]);
    store.insertSample(s('door', 'a', 2));
    expect(store.sequenceRange('door')).toEqual({ first: 1, last: 3 });
    expect(store.sequenceRange('hall')).toEqual({ first: 1, last: 1 });
    expect(store.samplesAfter('door', 0).map((x) => [x.zone, x.time - T0, x.seq])).toEqual([
      ['a', 10_000, 1],
      ['b', 10_000, 2],
      ['a', 20_000, 3],
    ]);
    expect(store.samplesAfter('door', 2, 1).map((x) => x.seq)).toEqual([3]);
    // A batch that fails (an overlapping sample) stores nothing and uses no number.
    expect(() => store.insertSamples([s('door', 'a', 3), s('door', 'a', 3)])).toThrow(/overlaps/);
    expect(store.sequenceRange('door').last).toBe(3);
    // Pruned samples keep their numbers used: the next one is 4.
    store.pruneSamples(T0 + 3_600_000);
    expect(store.sequenceRange('door')).toEqual({ first: 0, last: 3 });
    store.insertSample(s('door', 'a', 400));
    expect(store.samplesAfter('door', 0).map((x) => x.seq)).toEqual([4]);
    expect(() => store.samplesAfter('door', -1)).toThrow(/afterSeq/);
    expect(() => store.samplesAfter('door', 0, 0)).toThrow(/limit/);
    expect(store.sequenceRange('nowhere')).toEqual({ first: 0, last: 0 });
  });
});
