/**
 * Capacity helper: a capacity suggestion from a floor area and the use of the space, by the
 * occupant load factors of the International Building Code (IBC), 2021 edition, Table 1004.5
 * "Maximum floor area allowances per occupant".
 *
 * The factors below are RECALLED FROM MEMORY, not copied from the code text: check them against
 * the edition your authority adopted. Whatever this computes, the occupant load posted or approved
 * by the local authority having jurisdiction governs; this is a starting point for a display
 * capacity, never a compliance figure.
 *
 * Method (IBC §1004.5, recalled from memory): occupant load = floor area ÷ the factor for the use,
 * the area measured *gross* (inside the exterior walls, including corridors, stairs, toilets and
 * fittings) or *net* (the occupied space only, excluding those) as the table says. Fractions are
 * rounded up to a whole person (common practice in egress calculations).
 *
 * Example: a 1 000 ft² library reading room (50 ft² net per occupant) → 20 occupants;
 * 100 m² of the same → 100 / 4.645 = 21.53 → 22 occupants.
 */

/** Square metres in one square foot, exactly: 1 ft = 0.3048 m (international foot, 1959), squared. */
export const M2_PER_FT2 = 0.09290304;

/** How the area of a use is measured. */
export const AreaBasis = {
  /** Inside the exterior walls, everything included. */
  gross: 'gross',
  /** The occupied space only: corridors, stairs, toilets, fixed counters and fittings excluded. */
  net: 'net',
} as const;
export type AreaBasis = (typeof AreaBasis)[keyof typeof AreaBasis];

export interface OccupantLoadFactor {
  /** Stable key for the API (`use=`). */
  readonly use: string;
  /** The use as the table names it (paraphrased). */
  readonly label: string;
  /** Floor area per occupant, square feet. */
  readonly factorFt2: number;
  readonly basis: AreaBasis;
}

/** Citation shown with every suggestion. */
export const OCCUPANT_LOAD_SOURCE =
  'International Building Code 2021, Table 1004.5 (occupant load factors recalled from memory; check the edition your authority adopted)';

/** The caution shown with every suggestion. */
export const CAPACITY_CAUTION =
  'A suggestion only. The occupant load posted or approved by the local authority having jurisdiction governs; ' +
  'do not use Residuum counts for fire-code or occupancy-limit compliance.';

/** Uses relevant to libraries, shops, offices and shared workspaces (IBC 2021 Table 1004.5, recalled from memory). */
export const OCCUPANT_LOAD_FACTORS: readonly OccupantLoadFactor[] = [
  { use: 'library-reading', label: 'Library — reading rooms', factorFt2: 50, basis: 'net' },
  { use: 'library-stacks', label: 'Library — stack areas', factorFt2: 100, basis: 'gross' },
  { use: 'business', label: 'Business areas (offices)', factorFt2: 150, basis: 'gross' },
  { use: 'business-concentrated', label: 'Concentrated business use (e.g. call centres, co-working desks)', factorFt2: 50, basis: 'gross' },
  { use: 'mercantile', label: 'Mercantile (sales floor)', factorFt2: 60, basis: 'gross' },
  { use: 'mercantile-storage', label: 'Mercantile — storage, stock and shipping areas', factorFt2: 300, basis: 'gross' },
  { use: 'assembly-tables', label: 'Assembly without fixed seats — unconcentrated (tables and chairs)', factorFt2: 15, basis: 'net' },
  { use: 'assembly-chairs', label: 'Assembly without fixed seats — concentrated (chairs only, not fixed)', factorFt2: 7, basis: 'net' },
  { use: 'assembly-standing', label: 'Assembly without fixed seats — standing space', factorFt2: 5, basis: 'net' },
  { use: 'exhibit-gallery', label: 'Exhibit gallery and museum', factorFt2: 30, basis: 'net' },
  { use: 'classroom', label: 'Educational — classroom area', factorFt2: 20, basis: 'net' },
  { use: 'exercise', label: 'Exercise rooms', factorFt2: 50, basis: 'gross' },
  { use: 'kitchen-commercial', label: 'Kitchens, commercial', factorFt2: 200, basis: 'gross' },
  { use: 'accessory-storage', label: 'Accessory storage areas, mechanical equipment rooms', factorFt2: 300, basis: 'gross' },
  { use: 'warehouse', label: 'Warehouses', factorFt2: 500, basis: 'gross' },
];

/** Units of the area. */
export const AreaUnit = { m2: 'm2', ft2: 'ft2' } as const;
export type AreaUnit = (typeof AreaUnit)[keyof typeof AreaUnit];

export interface CapacityQuery {
  /** One of the `use` keys of {@link OCCUPANT_LOAD_FACTORS}. */
  readonly use: string;
  /** Floor area, > 0 and ≤ 10⁷, in `unit`. */
  readonly area: number;
  readonly unit: AreaUnit;
}

export interface CapacityOptions {
  /** The table to use; default {@link OCCUPANT_LOAD_FACTORS}. */
  readonly factors?: readonly OccupantLoadFactor[];
}

export interface CapacitySuggestion {
  readonly use: string;
  readonly label: string;
  readonly basis: AreaBasis;
  /** Floor area per occupant, ft². */
  readonly factorFt2: number;
  /** Floor area per occupant, m² (rounded to 3 decimals). */
  readonly factorM2: number;
  readonly areaFt2: number;
  readonly areaM2: number;
  /** Area ÷ factor before rounding (2 decimals). */
  readonly exact: number;
  /** Occupants, rounded up to a whole person. */
  readonly occupants: number;
  readonly source: string;
  readonly caution: string;
}

/** Thrown for a query that does not validate; the message names the field. */
export class CapacityError extends Error {
  override name = 'CapacityError';
}

/**
 * The capacity suggestion for a floor area and use (see the module comment for the method).
 *
 * ```ts
 * suggestCapacity({ use: 'library-reading', area: 1000, unit: 'ft2' }).occupants // 20
 * ```
 */
export function suggestCapacity(query: CapacityQuery, options: CapacityOptions = {}): CapacitySuggestion {
  const { factors = OCCUPANT_LOAD_FACTORS } = options;
  const entry = factors.find((f) => f.use === query.use);
  if (!entry) throw new CapacityError(`use must be one of ${factors.map((f) => f.use).join(', ')}, got ${JSON.stringify(query.use)}`);
  if (query.unit !== 'm2' && query.unit !== 'ft2') throw new CapacityError(`unit must be m2 or ft2, got ${JSON.stringify(query.unit)}`);
  if (typeof query.area !== 'number' || !Number.isFinite(query.area) || !(query.area > 0 && query.area <= 1e7)) {
    throw new CapacityError(`area must be a number > 0 and ≤ 10000000 (${query.unit}), got ${String(query.area)}`);
  }
  const areaFt2 = query.unit === 'ft2' ? query.area : query.area / M2_PER_FT2;
  const exact = areaFt2 / entry.factorFt2;
  // A tolerance of 1e-9 keeps an exact quotient (e.g. 1000 / 50) from rounding up through float error.
  const occupants = Math.ceil(exact - 1e-9);
  return {
    use: entry.use,
    label: entry.label,
    basis: entry.basis,
    factorFt2: entry.factorFt2,
    factorM2: round(entry.factorFt2 * M2_PER_FT2, 3),
    areaFt2: round(areaFt2, 2),
    areaM2: round(query.unit === 'm2' ? query.area : query.area * M2_PER_FT2, 2),
    exact: round(exact, 2),
    occupants,
    source: OCCUPANT_LOAD_SOURCE,
    caution: CAPACITY_CAUTION,
  };
}

function round(v: number, digits: number): number {
  const f = 10 ** digits;
  return Math.round(v * f) / f;
}
