import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { tempStore, type TempStore } from './tempStore.ts';

/** Deterministic pseudo-random bytes (a linear congruential generator). */
function bytes(n: number, seed: number): Uint8Array {
  const out = new Uint8Array(n);
  let x = seed >>> 0;
  for (let i = 0; i < n; i++) {
    x = (Math.imul(x, 1664525) + 1013904223) >>> 0;
    out[i] = x >>> 24;
  }
  return out;
}

describe('models', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
    t.store.upsertCamera({ id: 'cam' });
  });
  afterEach(() => t.cleanup());

  it('round-trips the model bytes exactly, including from a view into a larger buffer', () => {
    const data = bytes(3 * 1024 * 1024 + 7, 42);
    const id = t.store.insertModel({ camera: 'cam', created: 10, width: 160, height: 120, components: 8, formatVersion: 1, data, metadata: { noise: 2.5 } });
    const back = t.store.getModel(id);
    expect(back).toMatchObject({ id, camera: 'cam', created: 10, width: 160, height: 120, components: 8, formatVersion: 1, bytes: data.length, metadata: { noise: 2.5 } });
    expect(back?.data).toBeInstanceOf(Uint8Array);
    expect(Buffer.compare(Buffer.from(back!.data), Buffer.from(data))).toBe(0);

    const big = bytes(1000, 7);
    const view = big.subarray(100, 300);
    const id2 = t.store.insertModel({ camera: 'cam', created: 20, width: 10, height: 20, components: 1, formatVersion: 2, data: view });
    const back2 = t.store.getModel(id2)!;
    expect(back2.data.length).toBe(200);
    expect(Array.from(back2.data)).toEqual(Array.from(view));
    // The stored copy does not follow later changes to the caller's buffer.
    big[150] ^= 0xff;
    expect(t.store.getModel(id2)!.data[50]).toBe(back2.data[50]);
    expect(t.store.getModel(id2)!.data[50]).not.toBe(big[150]);
  });

  it('stores an empty model file and lists models without bytes', () => {
    const id = t.store.insertModel({ camera: 'cam', created: 5, width: 1, height: 1, components: 0, formatVersion: 1, data: new Uint8Array(0) });
    expect(t.store.getModel(id)?.data.length).toBe(0);
    t.store.insertModel({ camera: 'cam', created: 9, width: 2, height: 2, components: 1, formatVersion: 1, data: bytes(16, 1) });
    const list = t.store.listModels('cam');
    expect(list.map((m) => [m.created, m.bytes])).toEqual([
      [5, 0],
      [9, 16],
    ]);
    expect(list[0]).not.toHaveProperty('data');
    expect(t.store.latestModel('cam')?.created).toBe(9);
    expect(t.store.deleteModel(id)).toBe(true);
    expect(t.store.getModel(id)).toBeUndefined();
  });

  it('refuses bad input by field', () => {
    const base = { camera: 'cam', width: 4, height: 4, components: 1, formatVersion: 1, data: new Uint8Array(4) };
    expect(() => t.store.insertModel({ ...base, data: [1, 2] as unknown as Uint8Array })).toThrow(/^model\.data/);
    expect(() => t.store.insertModel({ ...base, width: 0 })).toThrow(/^model\.width/);
    expect(() => t.store.insertModel({ ...base, camera: 'other' })).toThrow(/^model\.camera: no camera 'other'/);
    expect(() => t.store.insertModel({ ...base, metadata: { n: 1n } })).toThrow(/^model\.metadata/);
  });
});
