import { describe, expect, it } from 'vitest';
import { assertAspect, workingSize } from '../../src/frames/workingSize.ts';

// Expected sizes are hand-computed: round(320 · 1080 / 1920) = round(180) = 180, etc.
describe('workingSize', () => {
  it('scales the long side to 320 by default, landscape or portrait', () => {
    expect(workingSize(1920, 1080)).toEqual({ width: 320, height: 180 });
    expect(workingSize(1080, 1920)).toEqual({ width: 180, height: 320 });
    expect(workingSize(640, 480)).toEqual({ width: 320, height: 240 });
    expect(workingSize(500, 500)).toEqual({ width: 320, height: 320 });
  });

  it('rounds the short side to the nearest pixel', () => {
    expect(workingSize(1000, 333)).toEqual({ width: 320, height: 107 }); // 106.56
    expect(workingSize(1000, 332)).toEqual({ width: 320, height: 106 }); // 106.24
    expect(workingSize(333, 1000, { longSide: 100 })).toEqual({ width: 33, height: 100 }); // 33.3
  });

  it('follows the source aspect ratio from a given width', () => {
    expect(workingSize(1920, 1080, { width: 100 })).toEqual({ width: 100, height: 56 }); // 56.25
    expect(workingSize(1080, 1920, { width: 90 })).toEqual({ width: 90, height: 160 });
    // width wins over longSide
    expect(workingSize(1920, 1080, { width: 100, longSide: 50 })).toEqual({ width: 100, height: 56 });
  });

  it('upscales small sources to the long side (the model fixes the size)', () => {
    expect(workingSize(160, 120)).toEqual({ width: 320, height: 240 });
    expect(workingSize(16, 9, { longSide: 64 })).toEqual({ width: 64, height: 36 });
  });

  it('keeps at least one pixel on the short side', () => {
    expect(workingSize(10000, 1)).toEqual({ width: 320, height: 1 });
    expect(workingSize(1, 10000, { longSide: 10 })).toEqual({ width: 1, height: 10 });
  });

  it('rejects sizes that are not whole numbers ≥ 1, naming the field', () => {
    expect(() => workingSize(0, 100)).toThrow(/source width/);
    expect(() => workingSize(100, 1.5)).toThrow(/source height/);
    expect(() => workingSize(100, 100, { width: 0 })).toThrow(/width must be a whole number/);
    expect(() => workingSize(100, 100, { longSide: Number.NaN })).toThrow(/longSide/);
  });
});

describe('assertAspect', () => {
  it('accepts equal aspect ratios at any scale', () => {
    expect(() => assertAspect({ width: 320, height: 240 }, { width: 640, height: 480 })).not.toThrow();
    expect(() => assertAspect({ width: 320, height: 180 }, { width: 1920, height: 1080 })).not.toThrow();
  });

  it('accepts the rounding of workingSize', () => {
    for (const [w, h] of [[1000, 333], [1366, 768], [720, 576], [1280, 720], [333, 1000]]) {
      expect(() => assertAspect(workingSize(w, h), { width: w, height: h })).not.toThrow();
    }
  });

  it('allows exactly 1 % and refuses more, by default', () => {
    expect(() => assertAspect({ width: 101, height: 100 }, { width: 100, height: 100 })).not.toThrow();
    expect(() => assertAspect({ width: 102, height: 100 }, { width: 100, height: 100 })).toThrow(RangeError);
    expect(() => assertAspect({ width: 100, height: 102 }, { width: 100, height: 100 })).toThrow(RangeError);
  });

  it('names both sizes when it throws', () => {
    expect(() => assertAspect({ width: 320, height: 240 }, { width: 1920, height: 1080 })).toThrow(
      /source is 1920×1080 .*model is 320×240/,
    );
  });

  it('takes another tolerance', () => {
    expect(() => assertAspect({ width: 105, height: 100 }, { width: 100, height: 100 }, 0.05)).not.toThrow();
    expect(() => assertAspect({ width: 101, height: 100 }, { width: 100, height: 100 }, 0)).toThrow();
    expect(() => assertAspect({ width: 1, height: 1 }, { width: 1, height: 1 }, -1)).toThrow(/tolerance/);
  });
});
