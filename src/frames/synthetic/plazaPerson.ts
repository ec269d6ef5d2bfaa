/**
 * People of the plaza (plaza.ts) as drawn: a soft-edged grey body ellipse with a round head (the
 * reading room's standing shape), scaled by the plaza's perspective, and their cast shadows.
 * Invented figures, no real people.
 *
 * Shape, in units of (drawn height / 39): body ellipse radii 7 × 16 with its bottom at the foot
 * point, head radius 4.5 with its centre 2.5 above the body's top, so the figure is 39 units tall
 * and 14 wide. The soft edge ramps coverage from 1 to 0 over 1.5 px around each contour (½ on the
 * contour), so the drawn area is the area inside the contours.
 *
 * Shadow: a soft ellipse on the paving that starts under the feet and points along the fixed
 * sun direction (20° below the horizontal, to the right), 0.64 of the person's drawn height long
 * and 0.64 of their width wide; inside it the paving keeps a share `light` of its brightness
 * (0.6–0.75 per person), with a penumbra of 1 px + 5 % of the height.
 */
import type { PlazaGeometry } from './plazaGeometry.ts';

/** Clothing and hair grey levels (albedo). */
export interface Look {
  readonly shirt: number;
  readonly trousers: number;
  readonly hair: number;
}

export const SHAPE = { rx: 7, ry: 16, head: 4.5, neck: 2.5, tall: 39 } as const;
const SOFT_EDGE = 1.5; // px
const SUN = (20 * Math.PI) / 180; // shadow direction below the horizontal, pointing right
const SHADOW_LENGTH = 0.32; // semi-major axis, share of the drawn height
const SHADOW_WIDTH = 0.32; // semi-minor axis, share of the drawn width (14 units)

/** Drawn height in px of a person of `scale` with feet on normalised row y. */
export function heightPx(geometry: PlazaGeometry, y: number, scale: number): number {
  return scale * geometry.heightAt(y) * geometry.height;
}

/**
 * Bounding box [x0, y0, x1, y1] (normalised) of the half-coverage contour of a person with the
 * foot point (x, y): the bottom centre of the box.
 */
export function personBox(geometry: PlazaGeometry, x: number, y: number, scale: number): [number, number, number, number] {
  const u = heightPx(geometry, y, scale) / SHAPE.tall;
  const halfW = (SHAPE.rx * u) / geometry.width;
  return [x - halfW, y - (SHAPE.tall * u) / geometry.height, x + halfW, y];
}

/**
 * Coverage of a pixel centre by one ellipse with a linear soft edge of SOFT_EDGE px: the signed
 * distance is approximated by f/|∇f| for f = (dx/rx)² + (dy/ry)² − 1 (first order, exact on the
 * contour), so coverage is ½ on the contour.
 */
function ellipseAlpha(dx: number, dy: number, rx: number, ry: number, soft: number): number {
  const ax = dx / (rx * rx);
  const ay = dy / (ry * ry);
  const f = dx * ax + dy * ay - 1;
  const g = 2 * Math.sqrt(ax * ax + ay * ay);
  if (g === 0) return 1;
  const alpha = 0.5 - f / g / soft;
  return alpha <= 0 ? 0 : alpha >= 1 ? 1 : alpha;
}

/** Paints one person with foot point (x, y) (normalised) into the albedo image `img`. */
export function drawPerson(img: Float32Array, geometry: PlazaGeometry, x: number, y: number, scale: number, look: Look): void {
  const { width, height } = geometry;
  const u = heightPx(geometry, y, scale) / SHAPE.tall;
  const rx = SHAPE.rx * u;
  const ry = SHAPE.ry * u;
  const hr = SHAPE.head * u;
  const fx = x * width;
  const fy = y * height;
  const bcy = fy - ry; // body centre
  const hcy = fy - 2 * ry - SHAPE.neck * u; // head centre
  const legLine = bcy + 0.15 * ry;
  const { shirt, trousers, hair } = look;
  const x0 = Math.max(0, Math.floor(fx - rx - SOFT_EDGE));
  const x1 = Math.min(width - 1, Math.ceil(fx + rx + SOFT_EDGE));
  const y0 = Math.max(0, Math.floor(hcy - hr - SOFT_EDGE));
  const y1 = Math.min(height - 1, Math.ceil(fy + SOFT_EDGE));
  for (let py = y0; py <= y1; py++) {
    const cy = py + 0.5;
    const dyb = cy - bcy;
    const dyh = cy - hcy;
    const cloth = (cy > legLine ? trousers : shirt) * (1 - 0.05 * (dyb / ry)); // shoulders a little lighter
    for (let px = x0; px <= x1; px++) {
      const dx = px + 0.5 - fx;
      const ab = ellipseAlpha(dx, dyb, rx, ry, SOFT_EDGE);
      const ah = dyh < hr + SOFT_EDGE ? ellipseAlpha(dx, dyh, hr, hr, SOFT_EDGE) : 0;
      if (ab === 0 && ah === 0) continue;
      const i = py * width + px;
      let v = img[i];
      if (ab > 0) v += (cloth - v) * ab;
      if (ah > 0) v += (hair - v) * ah;
      img[i] = v;
    }
  }
}

/**
 * Lowers `shade` (1 = full light) under the shadow of a person with foot point (x, y), on rows
 * from `firstRow` down; overlapping shadows keep the darker value. Returns the rows touched as
 * [first, last + 1) (empty when first ≥ last).
 */
export function castShadow(
  shade: Float32Array,
  geometry: PlazaGeometry,
  x: number,
  y: number,
  scale: number,
  light: number,
  firstRow: number,
): [number, number] {
  const { width, height } = geometry;
  const h = heightPx(geometry, y, scale);
  const major = SHADOW_LENGTH * h;
  const minor = SHADOW_WIDTH * ((2 * SHAPE.rx) / SHAPE.tall) * h;
  const cos = Math.cos(SUN);
  const sin = Math.sin(SUN);
  const cx = x * width + 0.8 * major * cos;
  const cy = y * height + 0.8 * major * sin;
  const soft = 1 + 0.05 * h;
  const reach = major + soft;
  const depth = 1 - light;
  const xa = Math.max(0, Math.floor(cx - reach));
  const xb = Math.min(width - 1, Math.ceil(cx + reach));
  const ya = Math.max(firstRow, Math.floor(cy - reach));
  const yb = Math.min(height - 1, Math.ceil(cy + reach));
  for (let py = ya; py <= yb; py++) {
    const dy = py + 0.5 - cy;
    for (let px = xa; px <= xb; px++) {
      const dx = px + 0.5 - cx;
      const a = dx * cos + dy * sin; // along the shadow
      const b = -dx * sin + dy * cos; // across it
      const coverage = ellipseAlpha(a, b, major, minor, soft);
      if (coverage === 0) continue;
      const value = 1 - depth * coverage;
      const i = py * width + px;
      if (value < shade[i]) shade[i] = value;
    }
  }
  return [ya, yb + 1];
}

let unitArea: number | undefined;

/** Area of the person shape in units² (inside the half-coverage contours), by 16×16 supersampling per unit. */
export function shapeUnitArea(): number {
  if (unitArea !== undefined) return unitArea;
  const { rx, ry, head, neck, tall } = SHAPE;
  const sub = 16;
  const hcy = -2 * ry - neck;
  let inside = 0;
  for (let y = -tall * sub; y < 0; y++) {
    const py = (y + 0.5) / sub;
    for (let x = -rx * sub; x < rx * sub; x++) {
      const px = (x + 0.5) / sub;
      const body = (px / rx) ** 2 + ((py + ry) / ry) ** 2 <= 1;
      const inHead = px ** 2 + (py - hcy) ** 2 <= head * head;
      if (body || inHead) inside++;
    }
  }
  unitArea = inside / (sub * sub);
  return unitArea;
}
