import { describe, expect, it } from 'vitest';
import { SOURCE_SIZE_CHANGED } from '../../../src/frames/live/cameraSource.ts';
import { sourceSizeChange } from '../../../src/frames/live/sourceSizeChange.ts';

describe('sourceSizeChange', () => {
  it('tells a change of size as an online status detail, old → new', () => {
    const vga = { width: 640, height: 480 };
    const quad = { width: 1280, height: 960 };
    expect(sourceSizeChange(vga, quad)).toEqual({
      reason: `${SOURCE_SIZE_CHANGED}: 640×480 → 1280×960`,
      previousSourceSize: vga,
      sourceSize: quad,
    });
    expect(sourceSizeChange(quad, vga)?.reason).toBe('source size changed: 1280×960 → 640×480');
  });

  it('tells nothing for the first image or the same size', () => {
    expect(sourceSizeChange(undefined, { width: 320, height: 240 })).toBeUndefined();
    expect(sourceSizeChange({ width: 320, height: 240 }, { width: 320, height: 240 })).toBeUndefined();
  });

  it('does not keep or change the sizes it is given', () => {
    const before = Object.freeze({ width: 320, height: 240 });
    const after = Object.freeze({ width: 640, height: 480 });
    const change = sourceSizeChange(before, after)!;
    expect(change.previousSourceSize).not.toBe(before);
    expect(change.sourceSize).not.toBe(after);
  });
});
