import { describe, expect, it } from 'vitest';
import { CapacityError, M2_PER_FT2, OCCUPANT_LOAD_FACTORS, suggestCapacity } from '../../src/server/capacity.ts';

describe('suggestCapacity', () => {
  it('uses 0.3048 m per foot exactly', () => {
    // check: international yard and pound agreement (1959): 1 ft = 0.3048 m exactly, so 1 ft² = 0.09290304 m²
    expect(M2_PER_FT2).toBe(0.3048 * 0.3048);
    expect(M2_PER_FT2).toBeCloseTo(0.09290304, 12);
  });

  it('divides the area by the factor of the use and rounds up', () => {
    // check: IBC 2021 Table 1004.5 factors (recalled from memory): library reading rooms 50 ft² net,
    // stack areas 100 ft² gross, business 150 ft² gross, mercantile 60 ft² gross, unconcentrated
    // assembly (tables and chairs) 15 ft² net, standing space 5 ft² net.
    expect(suggestCapacity({ use: 'library-reading', area: 1000, unit: 'ft2' })).toMatchObject({ occupants: 20, exact: 20, factorFt2: 50, basis: 'net' });
    expect(suggestCapacity({ use: 'library-stacks', area: 1000, unit: 'ft2' })).toMatchObject({ occupants: 10, basis: 'gross' });
    expect(suggestCapacity({ use: 'business', area: 1000, unit: 'ft2' })).toMatchObject({ occupants: 7, exact: 6.67 });
    expect(suggestCapacity({ use: 'mercantile', area: 1200, unit: 'ft2' }).occupants).toBe(20);
    expect(suggestCapacity({ use: 'assembly-tables', area: 150, unit: 'ft2' }).occupants).toBe(10);
    expect(suggestCapacity({ use: 'assembly-standing', area: 151, unit: 'ft2' }).occupants).toBe(31);
  });

  it('converts square metres', () => {
    // 100 m² = 100 / 0.09290304 = 1076.39 ft²; ÷ 50 = 21.53 → 22 (worked by hand)
    const s = suggestCapacity({ use: 'library-reading', area: 100, unit: 'm2' });
    expect(s.areaFt2).toBeCloseTo(1076.39, 2);
    expect(s.exact).toBe(21.53);
    expect(s.occupants).toBe(22);
    expect(s.factorM2).toBe(4.645);
    expect(s.areaM2).toBe(100);
    // 46.4515 m² is 500 ft² (to 4 decimals): exactly 10 reading-room occupants, not 11
    expect(suggestCapacity({ use: 'library-reading', area: 500 * M2_PER_FT2, unit: 'm2' }).occupants).toBe(10);
  });

  it('always carries the source and the caution', () => {
    const s = suggestCapacity({ use: 'mercantile', area: 10, unit: 'm2' });
    expect(s.source).toMatch(/International Building Code 2021, Table 1004\.5.*recalled from memory/);
    expect(s.caution).toMatch(/authority having jurisdiction governs/);
  });

  it('names the field of a bad query', () => {
    expect(() => suggestCapacity({ use: 'ballroom', area: 10, unit: 'm2' })).toThrow(CapacityError);
    expect(() => suggestCapacity({ use: 'ballroom', area: 10, unit: 'm2' })).toThrow(/^use must be one of/);
    expect(() => suggestCapacity({ use: 'business', area: 0, unit: 'm2' })).toThrow(/^area must be/);
    expect(() => suggestCapacity({ use: 'business', area: Number.NaN, unit: 'm2' })).toThrow(/^area must be/);
    expect(() => suggestCapacity({ use: 'business', area: 10, unit: 'acre' as 'm2' })).toThrow(/^unit must be m2 or ft2/);
  });

  it('has unique use keys and positive factors', () => {
    const keys = OCCUPANT_LOAD_FACTORS.map((f) => f.use);
    expect(new Set(keys).size).toBe(keys.length);
    for (const f of OCCUPANT_LOAD_FACTORS) expect(f.factorFt2).toBeGreaterThan(0);
  });
});
