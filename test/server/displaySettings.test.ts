import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { DISPLAY_SETTING, mergeDisplaySettings, readDisplaySettings } from '../../src/server/displaySettings.ts';
import { tempStore, type TempStore } from '../store/tempStore.ts';

// Display settings merge field by field: a change that names one field, or one zone's low-stock
// mark, leaves everything else as it was (issue: one low-stock mark per request once replaced the
// whole map). Hand-made values; the rule is ours.
describe('display settings', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
  });
  afterEach(() => t.cleanup());

  const put = (change: unknown) => {
    const next = mergeDisplaySettings(readDisplaySettings(t.store), change);
    t.store.setSetting(DISPLAY_SETTING, next);
    return next;
  };

  it('keeps every other field and every other zone’s mark, one change at a time', () => {
    put({ lowStock: { 'stock-room/shelf-top': 0.3 } });
    put({ lowStock: { 'stock-room/shelf-middle': 0.2 } });
    put({ nearCapacity: 0.9 });
    put({ defaultLowStock: 0.1 });
    put({ lowStock: { 'stock-room/shelf-top': 0.25 } });
    expect(readDisplaySettings(t.store)).toEqual({
      nearCapacity: 0.9,
      defaultLowStock: 0.1,
      lowStock: { 'stock-room/shelf-top': 0.25, 'stock-room/shelf-middle': 0.2 },
    });
    put({ lowStock: { 'stock-room/shelf-top': null } });
    expect(readDisplaySettings(t.store).lowStock).toEqual({ 'stock-room/shelf-middle': 0.2 });
  });

  it('a damaged stored field falls back on its own; the others are kept, and the next change keeps them', () => {
    t.store.setSetting(DISPLAY_SETTING, {
      nearCapacity: 'high',
      defaultLowStock: 0.2,
      lowStock: { 'stock-room/shelf-top': 0.3, 'not a zone key': 0.5, 'stock-room/shelf-bottom': 7 },
    });
    expect(readDisplaySettings(t.store)).toEqual({ nearCapacity: 0.8, defaultLowStock: 0.2, lowStock: { 'stock-room/shelf-top': 0.3 } });
    put({ lowStock: { 'stock-room/shelf-middle': 0.1 } });
    expect(readDisplaySettings(t.store)).toEqual({ nearCapacity: 0.8, defaultLowStock: 0.2, lowStock: { 'stock-room/shelf-top': 0.3, 'stock-room/shelf-middle': 0.1 } });
  });

  it('refuses implausible numbers, naming the field and the range', () => {
    expect(() => put({ nearCapacity: 5e-324 })).toThrow('request body: nearCapacity must be a number from 0.1 to 1, got 5e-324');
    expect(() => put({ defaultLowStock: 1e308 })).toThrow('request body: defaultLowStock must be a number from 0 to 1, got 1e+308');
    expect(() => put({ lowStock: { 'stock-room/shelf-top': -1 } })).toThrow('request body: lowStock["stock-room/shelf-top"] must be a number from 0 to 1, got -1');
  });
});
