import { parse as parseYaml } from 'yaml';
import { AnchorPoint, ZoneKind, type NormalisedPoint, type PerspectiveReference, type Zone } from '../domain/zone.ts';

/** A zones file or configuration section that does not validate; the message names the field. */
export class ZoneError extends Error {
  override name = 'ZoneError';
}

const idPattern = /^[A-Za-z0-9][A-Za-z0-9_-]{0,63}$/;

/**
 * Reads and validates the `zones` list of a zones file (YAML or JSON; JSON is valid YAML):
 *
 * ```yaml
 * zones:
 *   - id: tables            # letters, digits, - and _
 *     name: Reading tables  # optional
 *     kind: room            # room | shelf
 *     polygon: [[0.05, 0.45], [0.60, 0.45], [0.60, 0.98], [0.05, 0.98]]
 *     personArea: 0.009     # optional, fraction of the frame area
 *     perspective:          # optional, instead of personArea: reference people (foot y, area)
 *       - { y: 0.55, area: 0.005 }
 *       - { y: 0.95, area: 0.014, x: 0.4, height: 0.24 }   # a box: foot x and box height too
 *     minBlobArea: 0.002    # optional, fraction of the frame area
 *     threshold: 3          # optional, noise units
 *     anchor: foot          # optional: foot | centroid
 *     capacity: 24          # optional, people
 *     absorbSeconds: 600    # optional: a static change becomes background after this long (shelves)
 * ```
 *
 * A bare list (without the `zones:` key) is accepted too. Errors name the source and the field,
 * e.g. `zones.yaml: zones[1].polygon[2][0] must be a number in 0..1, got NaN`.
 */
export function parseZones(text: string, source = 'zones'): Zone[] {
  let doc: unknown;
  try {
    doc = parseYaml(text);
  } catch (error) {
    throw new ZoneError(`${source}: not valid YAML or JSON (${(error as Error).message.split('\n')[0]})`);
  }
  return validateZones(doc, source);
}

/** Validates an already parsed zones value: a list, or an object with a `zones` list. */
export function validateZones(doc: unknown, source = 'zones', path = 'zones'): Zone[] {
  const list = Array.isArray(doc) ? doc : isRecord(doc) ? doc.zones : undefined;
  if (!Array.isArray(list)) throw new ZoneError(`${source}: ${path} must be a list of zones`);
  if (list.length === 0) throw new ZoneError(`${source}: ${path} is empty; give at least one zone`);
  const seen = new Set<string>();
  return list.map((raw, index) => {
    const zone = validateZone(raw, source, `${path}[${index}]`);
    if (seen.has(zone.id)) throw new ZoneError(`${source}: ${path}[${index}].id "${zone.id}" is used twice`);
    seen.add(zone.id);
    return zone;
  });
}

const knownFields = new Set(['id', 'name', 'kind', 'polygon', 'threshold', 'minBlobArea', 'personArea', 'perspective', 'anchor', 'capacity', 'absorbSeconds']);

function validateZone(raw: unknown, source: string, at: string): Zone {
  const fail = (field: string, message: string): never => {
    throw new ZoneError(`${source}: ${at}${field ? '.' + field : ''}${message.startsWith('[') ? '' : ' '}${message}`);
  };
  if (!isRecord(raw)) fail('', 'must be an object with id, kind and polygon');
  const z = raw as Record<string, unknown>;
  for (const key of Object.keys(z)) if (!knownFields.has(key)) fail(key, `is not a zone field (known: ${[...knownFields].join(', ')})`);

  if (typeof z.id !== 'string' || !idPattern.test(z.id)) {
    fail('id', `must be 1–64 letters, digits, "-" or "_", starting with a letter or digit, got ${show(z.id)}`);
  }
  if (z.name !== undefined && (typeof z.name !== 'string' || z.name.length > 200)) fail('name', 'must be text of at most 200 characters');
  const kinds = Object.values(ZoneKind) as string[];
  if (typeof z.kind !== 'string' || !kinds.includes(z.kind)) fail('kind', `must be one of ${kinds.join(', ')}, got ${show(z.kind)}`);
  const polygon = validatePolygon(z.polygon, (message) => fail('polygon', message));

  const fraction = (key: 'personArea' | 'minBlobArea') => {
    const v = z[key];
    if (v === undefined) return undefined;
    const [min, max] = ZONE_RANGES[key];
    if (typeof v !== 'number' || !(v >= min && v <= max)) fail(key, `must be a fraction of the frame area from ${min} to ${max}, got ${show(v)}`);
    return v as number;
  };
  const threshold = z.threshold;
  const [tMin, tMax] = ZONE_RANGES.threshold;
  if (threshold !== undefined && (typeof threshold !== 'number' || !(threshold >= tMin && threshold <= tMax))) {
    fail('threshold', `must be a number of noise units from ${tMin} to ${tMax}, got ${show(threshold)}`);
  }
  const anchors = Object.values(AnchorPoint) as string[];
  if (z.anchor !== undefined && (typeof z.anchor !== 'string' || !anchors.includes(z.anchor))) {
    fail('anchor', `must be one of ${anchors.join(', ')}, got ${show(z.anchor)}`);
  }
  const absorbSeconds = z.absorbSeconds;
  if (absorbSeconds !== undefined && (typeof absorbSeconds !== 'number' || !(absorbSeconds >= 1 && absorbSeconds <= MAX_ABSORB_SECONDS))) {
    fail('absorbSeconds', `must be a number of seconds from 1 to ${MAX_ABSORB_SECONDS} (a week), got ${show(absorbSeconds)}; leave it out to never absorb`);
  }
  const capacity = z.capacity;
  if (capacity !== undefined && (typeof capacity !== 'number' || !Number.isInteger(capacity) || capacity < 0 || capacity > ZONE_RANGES.capacity[1])) {
    fail('capacity', `must be a whole number of people from 0 to ${ZONE_RANGES.capacity[1]}, got ${show(capacity)}`);
  }
  let perspective: PerspectiveReference[] | undefined;
  if (z.perspective !== undefined) {
    if (!Array.isArray(z.perspective) || z.perspective.length < 2) fail('perspective', 'must be a list of at least 2 reference people {y, area} or boxes {x, y, area, height}');
    const list = z.perspective as unknown[];
    if (list.length > 100) fail('perspective', `has ${list.length} reference people; at most 100`);
    perspective = list.map((r, i) => validateReference(r, (field, message) => fail(`perspective[${i}]${field}`, message)));
    if (new Set(perspective.map((r) => r.y)).size < 2) fail('perspective', 'needs reference people at two or more different heights (y)');
    const rows = perspective.map((r) => r.y);
    if (Math.max(...rows) - Math.min(...rows) < MIN_REFERENCE_SPREAD) {
      fail('perspective', `needs reference people whose feet are at least ${MIN_REFERENCE_SPREAD} of the frame height apart (y), got ${show(Math.max(...rows) - Math.min(...rows))}`);
    }
  }
  const zone: Zone = {
    id: z.id as string,
    kind: z.kind as ZoneKind,
    polygon,
    ...(z.name !== undefined && { name: z.name as string }),
    ...(threshold !== undefined && { threshold: threshold as number }),
    ...(z.minBlobArea !== undefined && { minBlobArea: fraction('minBlobArea') }),
    ...(z.personArea !== undefined && { personArea: fraction('personArea') }),
    ...(perspective !== undefined && { perspective }),
    ...(z.anchor !== undefined && { anchor: z.anchor as AnchorPoint }),
    ...(capacity !== undefined && { capacity: capacity as number }),
    ...(absorbSeconds !== undefined && { absorbSeconds: absorbSeconds as number }),
  };
  return zone;
}

/**
 * Plausible ranges of a zone's numbers, inclusive (values outside them are mistakes, and the
 * extreme ones make absurd counts: a person area of 5e-324 turns any blob into the largest count).
 * Areas are fractions of the frame: 0.00005 is about 4 pixels at 320×240, the smallest blob that
 * can still be a person; 0.5 is half the frame. Thresholds in noise units: below 0.5 every pixel
 * is foreground, above 50 none is. Capacity in people.
 */
export const ZONE_RANGES = {
  personArea: [0.00005, 0.5],
  minBlobArea: [0.00001, 0.5],
  threshold: [0.5, 50],
  capacity: [0, 100_000],
  /** A perspective reference's box height, fraction of the frame height. */
  referenceHeight: [0.005, 1],
} as const;

/** Longest absorption time of a zone, seconds (inclusive): a week. */
const MAX_ABSORB_SECONDS = 604_800;

/** Smallest spread of the reference people's foot rows (normalised, inclusive): closer rows give a wild slope. */
const MIN_REFERENCE_SPREAD = 0.02;
/** Rounding allowance when checking that a reference box lies in the frame (normalised). */
const BOX_SLACK = 1e-6;

/**
 * Checks one perspective reference: `{y, area}`, or a box `{x, y, area, height}` (foot point at
 * the bottom centre, width area / height) that must lie inside the frame.
 */
function validateReference(raw: unknown, fail: (field: string, message: string) => never): PerspectiveReference {
  if (!isRecord(raw)) return fail('', 'must be {y, area} or a box {x, y, area, height}');
  for (const key of Object.keys(raw)) if (!['x', 'y', 'area', 'height'].includes(key)) fail(`.${key}`, 'is not a reference field (known: x, y, area, height)');
  const { x, y, area, height } = raw;
  if (typeof y !== 'number' || !(y >= 0 && y <= 1)) fail('.y', `must be the foot row in 0..1, got ${show(y)}`);
  const [aMin, aMax] = ZONE_RANGES.personArea;
  if (typeof area !== 'number' || !(area >= aMin && area <= aMax)) fail('.area', `must be a fraction of the frame area from ${aMin} to ${aMax}, got ${show(area)}`);
  if ((x === undefined) !== (height === undefined)) fail('', 'needs both x and height (a box) or neither');
  if (x === undefined) return { y: y as number, area: area as number };
  if (typeof x !== 'number' || !(x >= 0 && x <= 1)) fail('.x', `must be the foot point's x in 0..1, got ${show(x)}`);
  const [hMin, hMax] = ZONE_RANGES.referenceHeight;
  if (typeof height !== 'number' || !(height >= hMin && height <= hMax)) fail('.height', `must be the box height as a fraction of the frame height from ${hMin} to ${hMax}, got ${show(height)}`);
  const [fx, fy, a, h] = [x as number, y as number, area as number, height as number];
  const width = a / h;
  if (fy - h < -BOX_SLACK) fail('', `is a box reaching above the top of the frame (y − height = ${show(fy - h)})`);
  if (fx - width / 2 < -BOX_SLACK || fx + width / 2 > 1 + BOX_SLACK) {
    fail('', `is a box reaching past the ${fx - width / 2 < -BOX_SLACK ? 'left' : 'right'} edge of the frame (x ${show(fx)} ± width/2 ${show(width / 2)}, width = area / height)`);
  }
  return { x: fx, y: fy, area: a, height: h };
}

/** Checks a polygon: ≥ 3 vertices, each [x, y] with finite numbers in 0..1, simple, non-zero area. */
export function validatePolygon(raw: unknown, fail: (message: string) => never): NormalisedPoint[] {
  if (!Array.isArray(raw)) return fail(`must be a list of [x, y] points, got ${show(raw)}`);
  if (raw.length < 3) return fail(`needs at least 3 points, got ${raw.length}`);
  if (raw.length > 1000) return fail(`has ${raw.length} points; at most 1000`);
  const points = raw.map((p, i): NormalisedPoint => {
    if (!Array.isArray(p) || p.length !== 2) return fail(`[${i}] must be a pair [x, y], got ${show(p)}`);
    p.forEach((v, axis) => {
      if (typeof v !== 'number' || !Number.isFinite(v) || v < 0 || v > 1) {
        fail(`[${i}][${axis}] must be a number in 0..1 (${axis === 0 ? 'x, from the left' : 'y, from the top'}), got ${show(v)}`);
      }
    });
    return [p[0] as number, p[1] as number];
  });
  const crossing = firstSelfIntersection(points);
  if (crossing) return fail(`is self-intersecting: edge ${crossing[0]} crosses edge ${crossing[1]}`);
  if (Math.abs(signedArea(points)) < 1e-9) return fail('has zero area');
  return points;
}

/** Shoelace formula. */
function signedArea(p: readonly NormalisedPoint[]): number {
  let s = 0;
  for (let i = 0, j = p.length - 1; i < p.length; j = i++) s += p[j][0] * p[i][1] - p[i][0] * p[j][1];
  return s / 2;
}

/** The first pair of edges (by index; edge i runs from point i to point i+1) that touch or cross. */
function firstSelfIntersection(p: readonly NormalisedPoint[]): [number, number] | undefined {
  const n = p.length;
  for (let i = 0; i < n; i++) {
    for (let j = i + 1; j < n; j++) {
      const adjacent = j === i + 1 || (i === 0 && j === n - 1);
      const a = p[i], b = p[(i + 1) % n], c = p[j], d = p[(j + 1) % n];
      if (adjacent) {
        // Adjacent edges share one vertex; they only conflict when they fold back over each other.
        const shared = j === i + 1 ? b : a;
        const other1 = j === i + 1 ? a : b;
        const other2 = j === i + 1 ? d : c;
        if (cross(shared, other1, other2) === 0 && dot(shared, other1, other2) > 0) return [i, j];
        continue;
      }
      if (segmentsTouch(a, b, c, d)) return [i, j];
    }
  }
  return undefined;
}

function cross(o: NormalisedPoint, a: NormalisedPoint, b: NormalisedPoint): number {
  return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0]);
}

function dot(o: NormalisedPoint, a: NormalisedPoint, b: NormalisedPoint): number {
  return (a[0] - o[0]) * (b[0] - o[0]) + (a[1] - o[1]) * (b[1] - o[1]);
}

function onSegment(a: NormalisedPoint, b: NormalisedPoint, p: NormalisedPoint): boolean {
  return Math.min(a[0], b[0]) <= p[0] && p[0] <= Math.max(a[0], b[0]) && Math.min(a[1], b[1]) <= p[1] && p[1] <= Math.max(a[1], b[1]);
}

/** Segment intersection by orientation tests (Cormen et al., Introduction to Algorithms, §33.1). */
function segmentsTouch(a: NormalisedPoint, b: NormalisedPoint, c: NormalisedPoint, d: NormalisedPoint): boolean {
  const d1 = cross(c, d, a), d2 = cross(c, d, b), d3 = cross(a, b, c), d4 = cross(a, b, d);
  if (((d1 > 0 && d2 < 0) || (d1 < 0 && d2 > 0)) && ((d3 > 0 && d4 < 0) || (d3 < 0 && d4 > 0))) return true;
  return (
    (d1 === 0 && onSegment(c, d, a)) ||
    (d2 === 0 && onSegment(c, d, b)) ||
    (d3 === 0 && onSegment(a, b, c)) ||
    (d4 === 0 && onSegment(a, b, d))
  );
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function show(v: unknown): string {
  if (typeof v === 'number') return String(v);
  if (v === undefined) return 'nothing';
  const s = JSON.stringify(v);
  return s === undefined ? String(v) : s.length > 60 ? s.slice(0, 57) + '...' : s;
}
