import { describe, expect, it } from 'vitest';
import { boundedQueue } from '../../../src/outputs/mqtt/boundedQueue.ts';
import { mulberry } from '../../helpers/random.ts';

describe('boundedQueue', () => {
  it('drops the oldest when full', () => {
    const q = boundedQueue<number>(2);
    expect(q.push(1)).toBeUndefined();
    expect(q.push(2)).toBeUndefined();
    expect(q.push(3)).toBe(1);
    expect(q.length).toBe(2);
    expect(q.unshift(0)).toBe(0);
    expect(q.shift()).toBe(2);
    expect(q.unshift(9)).toBeUndefined();
    expect([q.shift(), q.shift(), q.shift()]).toEqual([9, 3, undefined]);
  });

  it('behaves like a simple array reference under random operations', () => {
    const random = mulberry(11);
    const limit = 37;
    const q = boundedQueue<number>(limit);
    const ref: number[] = [];
    for (let i = 0; i < 20_000; i++) {
      const r = random();
      if (r < 0.55) {
        const dropped = q.push(i);
        const expected = ref.length === limit ? ref.shift() : undefined;
        ref.push(i);
        expect(dropped).toBe(expected);
      } else if (r < 0.65) {
        const dropped = q.unshift(-i);
        if (ref.length < limit) ref.unshift(-i);
        expect(dropped).toBe(ref[0] === -i ? undefined : -i);
      } else {
        expect(q.shift()).toBe(ref.shift());
      }
      expect(q.length).toBe(ref.length);
    }
  });
});
