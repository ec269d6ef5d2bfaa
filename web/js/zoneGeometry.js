// Pure helpers of the zone editor on normalised points [x, y] (x 0..1 from the left, y 0..1 from the top).

export function clone(z) {
  return JSON.parse(JSON.stringify(z));
}

export function clamp01(v) {
  return Math.min(1, Math.max(0, v));
}

export function round(p) {
  return [Math.round(p[0] * 10000) / 10000, Math.round(p[1] * 10000) / 10000];
}

export function round4(v) {
  return Math.round(v * 10000) / 10000;
}

/** The box spanned by two corner points. */
export function normRect([a, b]) {
  return { x0: Math.min(a[0], b[0]), y0: Math.min(a[1], b[1]), x1: Math.max(a[0], b[0]), y1: Math.max(a[1], b[1]) };
}

/** The middle of the widest stretch of the polygon's inside along row y (even–odd rule), or of its bounding box. */
export function middleAtRow(poly, y) {
  const crossings = [];
  for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
    const [xi, yi] = poly[i];
    const [xj, yj] = poly[j];
    if (yi > y !== yj > y) crossings.push(xi + ((y - yi) * (xj - xi)) / (yj - yi));
  }
  crossings.sort((a, b) => a - b);
  let best;
  let widest = -1;
  for (let k = 0; k + 1 < crossings.length; k += 2) {
    if (crossings[k + 1] - crossings[k] > widest) {
      widest = crossings[k + 1] - crossings[k];
      best = (crossings[k] + crossings[k + 1]) / 2;
    }
  }
  if (best !== undefined) return best;
  const xs = poly.map((p) => p[0]);
  return (Math.min(...xs) + Math.max(...xs)) / 2;
}

export function topLeft(poly) {
  return [Math.min(...poly.map((p) => p[0])), Math.min(...poly.map((p) => p[1]))];
}

/** Even–odd rule point-in-polygon test (ray casting). */
export function inside(p, poly) {
  let c = false;
  for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
    const [xi, yi] = poly[i];
    const [xj, yj] = poly[j];
    if (yi > p[1] !== yj > p[1] && p[0] < ((xj - xi) * (p[1] - yi)) / (yj - yi) + xi) c = !c;
  }
  return c;
}

export function nearestOnSegment(p, a, b) {
  const dx = b[0] - a[0];
  const dy = b[1] - a[1];
  const len = dx * dx + dy * dy;
  const t = len === 0 ? 0 : Math.max(0, Math.min(1, ((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len));
  const q = [a[0] + t * dx, a[1] + t * dy];
  return [q, 0];
}

export function hexAlpha(hex, alpha) {
  const n = parseInt(hex.slice(1), 16);
  return `rgba(${(n >> 16) & 255}, ${(n >> 8) & 255}, ${n & 255}, ${alpha})`;
}

export function brief(v) {
  if (v === null || v === undefined) return '—';
  if (Array.isArray(v) && Array.isArray(v[0])) return `${v.length} corners`;
  if (Array.isArray(v) && v[0] && typeof v[0] === 'object' && 'area' in v[0]) return `${v.length} reference ${v.length === 1 ? 'person' : 'people'}`;
  const s = JSON.stringify(v);
  return s.length > 60 ? `${s.slice(0, 57)}…` : s;
}
