import { describe, expect, it } from 'vitest';
import { naturalCompare, naturalSort } from '../../src/frames/naturalSort.ts';

describe('naturalCompare', () => {
  it('orders digit runs by value', () => {
    expect(naturalCompare('frame2.png', 'frame10.png')).toBeLessThan(0);
    expect(naturalCompare('frame10.png', 'frame2.png')).toBeGreaterThan(0);
    expect(naturalCompare('frame9', 'frame10')).toBeLessThan(0);
    expect(naturalCompare('a1b2', 'a1b10')).toBeLessThan(0);
    expect(naturalCompare('2024-01-09 10.jpg', '2024-01-10 9.jpg')).toBeLessThan(0);
  });

  it('compares numbers longer than a double can hold exactly', () => {
    expect(naturalCompare('f12345678901234567890', 'f12345678901234567891')).toBeLessThan(0);
    expect(naturalCompare('f99999999999999999999', 'f100000000000000000000')).toBeLessThan(0);
  });

  it('ignores case, then breaks ties by code units so the order is total', () => {
    expect(naturalCompare('Frame3.png', 'frame10.png')).toBeLessThan(0);
    expect(naturalCompare('frame3.PNG', 'FRAME2.png')).toBeGreaterThan(0);
    // Equal ignoring case: upper case (lower code units) first, and only identical strings give 0.
    expect(naturalCompare('A.png', 'a.png')).toBeLessThan(0);
    expect(naturalCompare('a.png', 'A.png')).toBeGreaterThan(0);
    expect(naturalCompare('a.png', 'a.png')).toBe(0);
  });

  it('treats leading zeros as the same number, ordering the padded name first on a tie', () => {
    expect(naturalCompare('img007', 'img8')).toBeLessThan(0);
    expect(naturalCompare('img010', 'img9')).toBeGreaterThan(0);
    expect(naturalCompare('img01', 'img1')).toBeLessThan(0);
    expect(naturalCompare('img1', 'img01')).toBeGreaterThan(0);
  });

  it('puts a prefix first and "." before digits before letters', () => {
    expect(naturalCompare('frame', 'frame1')).toBeLessThan(0);
    expect(naturalCompare('frame.png', 'frame1.png')).toBeLessThan(0);
    expect(naturalCompare('frame1.png', 'framea.png')).toBeLessThan(0);
    expect(naturalCompare('', 'a')).toBeLessThan(0);
  });
});

describe('naturalSort', () => {
  const names = ['frame10.png', 'frame2.png', 'Frame1.png', 'frame1.jpg', 'frame20.png', 'frame3.png', 'a.png', 'b2.png', 'b10.png'];

  it('sorts a camera folder as a person would, without changing its input', () => {
    const input = [...names];
    expect(naturalSort(input)).toEqual([
      'a.png', 'b2.png', 'b10.png', 'frame1.jpg', 'Frame1.png', 'frame2.png', 'frame3.png', 'frame10.png', 'frame20.png',
    ]);
    expect(input).toEqual(names);
  });

  it('gives the same result whatever the input order (ties included)', () => {
    const withTies = [...names, 'FRAME2.png', 'frame02.png', 'A.png'];
    const expected = naturalSort(withTies);
    for (let seed = 1; seed <= 20; seed++) {
      // A deterministic shuffle (Fisher–Yates with a linear congruential generator).
      const shuffled = [...withTies];
      let state = seed;
      for (let i = shuffled.length - 1; i > 0; i--) {
        state = (state * 1103515245 + 12345) % 2147483648;
        const j = state % (i + 1);
        [shuffled[i], shuffled[j]] = [shuffled[j], shuffled[i]];
      }
      expect(naturalSort(shuffled)).toEqual(expected);
    }
  });

  it('agrees with ICU numeric collation on names of letters, digits and dots', () => {
    // check: Intl.Collator (ICU) with numeric: true, sensitivity: 'base' — a reference natural order.
    // Names are distinct ignoring case and leading zeros, where both orders are fully defined.
    const collator = new Intl.Collator('en', { numeric: true, sensitivity: 'base' });
    const sample: string[] = [];
    for (const stem of ['cam', 'Cam2x', 'img', 'IMG', 'frame']) {
      for (const n of [0, 1, 2, 9, 10, 11, 99, 100, 101, 1000, 12345]) sample.push(`${stem}${n}.jpg`);
    }
    const distinct = [...new Map(sample.map((name) => [name.toLowerCase(), name])).values()];
    expect(naturalSort(distinct)).toEqual([...distinct].sort(collator.compare));
  });
});
