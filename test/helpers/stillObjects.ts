import type { SyntheticScene } from '../../src/frames/synthetic/scene.ts';

/** A person or box that appears at frame `from` and stays, not moving, until frame `to` (exclusive). */
export interface StillObject {
  readonly kind: 'seated-person' | 'box';
  /** Foot point (person) or bottom centre (box), normalised. */
  readonly at: readonly [number, number];
  readonly from: number;
  readonly to: number;
  /** Grey level of the clothes or the box. */
  readonly grey: number;
  /** Box only: width and height in pixels; default [12, 9]. */
  readonly size?: readonly [number, number];
}

/**
 * Invented data for the drift checks: the base scene's empty frames (nobody walking about) with
 * still objects painted in, before any lighting wrapper is applied on top (so that the light falls
 * on them too). A seated person is drawn like the reading room's (a soft-edged ellipse with a head,
 * 1.5-pixel edge ramp); a box is a hard-edged rectangle. `frameAt` returns no truth: the tests
 * know what they placed.
 */
export function withStillObjects(scene: SyntheticScene, objects: readonly StillObject[]): SyntheticScene {
  const { width, height } = scene;
  const paint = (t: number, data: Float32Array): void => {
    for (const o of objects) {
      if (t < o.from || t >= o.to) continue;
      const fx = o.at[0] * width;
      const fy = o.at[1] * height;
      if (o.kind === 'box') {
        const [w, h] = o.size ?? [12, 9];
        for (let y = Math.round(fy - h); y < Math.round(fy); y++) {
          for (let x = Math.round(fx - w / 2); x < Math.round(fx + w / 2); x++) data[y * width + x] = o.grey;
        }
        continue;
      }
      const u = height / 240;
      const rx = 8 * u, ry = 10.5 * u, hr = 4.5 * u;
      const bodyY = fy - ry;
      const headY = fy - 2 * ry - 2.5 * u;
      for (let y = Math.floor(headY - hr - 2); y <= Math.ceil(fy + 2); y++) {
        for (let x = Math.floor(fx - rx - 2); x <= Math.ceil(fx + rx + 2); x++) {
          const dx = x + 0.5 - fx;
          const a = Math.max(alpha(dx, y + 0.5 - bodyY, rx, ry), alpha(dx, y + 0.5 - headY, hr, hr));
          const i = y * width + x;
          data[i] += (o.grey - data[i]) * a;
        }
      }
    }
  };
  return {
    ...scene,
    id: `${scene.id}+still`,
    frameAt(t, out) {
      const frame = scene.emptyFrameAt(t, out);
      paint(t, frame.data);
      return { frame, truth: {} };
    },
    objectsAt: () => [],
  };
}

/** Coverage of a pixel centre by an ellipse with a 1.5-pixel linear edge (½ on the contour). */
function alpha(dx: number, dy: number, rx: number, ry: number): number {
  const f = (dx / rx) ** 2 + (dy / ry) ** 2 - 1;
  const g = 2 * Math.hypot(dx / (rx * rx), dy / (ry * ry));
  if (g === 0) return 1;
  return Math.min(1, Math.max(0, 0.5 - f / g / 1.5));
}
