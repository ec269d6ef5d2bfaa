import type { SettingStore } from '../store/index.ts';
import { HttpError } from './HttpError.ts';

/**
 * Dashboard display settings, kept in the store's settings under `dashboard.display`: when a room
 * reads as nearly full, and when a shelf reads as running low. They change what the dashboard
 * says, not what is counted.
 */
export interface DisplaySettings {
  /** A room is "near" capacity at shown ≥ nearCapacity × capacity; share 0.1..1 inclusive, default 0.8. */
  readonly nearCapacity: number;
  /** A shelf is "low" below this fill, 0..1; default 0.15. */
  readonly defaultLowStock: number;
  /** Per-zone low-stock marks, keyed `camera/zone`, 0..1. */
  readonly lowStock: Readonly<Record<string, number>>;
}

export const DISPLAY_SETTING = 'dashboard.display';

/** Smallest near-capacity share (inclusive): below a tenth of capacity, "filling up" says nothing. */
export const MIN_NEAR_CAPACITY = 0.1;

export const DEFAULT_DISPLAY: DisplaySettings = { nearCapacity: 0.8, defaultLowStock: 0.15, lowStock: {} };

const ZONE_KEY = /^[A-Za-z0-9_-]{1,64}\/[A-Za-z0-9_-]{1,64}$/;

/**
 * The stored settings merged over the defaults, field by field: a damaged field (or one zone's
 * damaged mark) falls back to its default on its own, so that the next change, which is merged
 * into what is read here, does not lose the others.
 */
export function readDisplaySettings(store: SettingStore): DisplaySettings {
  const raw = store.getSetting(DISPLAY_SETTING);
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) return DEFAULT_DISPLAY;
  const r = raw as Record<string, unknown>;
  let settings = DEFAULT_DISPLAY;
  const take = (change: Record<string, unknown>) => {
    try {
      settings = mergeDisplaySettings(settings, change, 'stored');
    } catch {
      // this field (or mark) keeps its default
    }
  };
  if (r.nearCapacity !== undefined) take({ nearCapacity: r.nearCapacity });
  if (r.defaultLowStock !== undefined) take({ defaultLowStock: r.defaultLowStock });
  const lowStock: Record<string, number> = {};
  if (typeof r.lowStock === 'object' && r.lowStock !== null && !Array.isArray(r.lowStock)) {
    for (const [key, value] of Object.entries(r.lowStock)) {
      if (value === null) continue;
      try {
        Object.assign(lowStock, mergeDisplaySettings(DEFAULT_DISPLAY, { lowStock: { [key]: value } }, 'stored').lowStock);
      } catch {
        // this zone's mark is dropped; the others stay
      }
    }
  }
  return { ...settings, lowStock };
}

/**
 * Applies a change (a parsed JSON body) to `current`; throws HttpError 400 naming the field.
 * `{ "lowStock": { "stock-room/shelf-top": null } }` removes a zone's own mark.
 */
export function mergeDisplaySettings(current: DisplaySettings, change: unknown, source = 'request body'): DisplaySettings {
  const fail = (field: string, message: string): never => {
    throw new HttpError(400, `${source}${field ? `: ${field}` : ''} ${message}`);
  };
  if (typeof change !== 'object' || change === null || Array.isArray(change)) fail('', 'must be a JSON object');
  const c = change as Record<string, unknown>;
  for (const k of Object.keys(c)) if (!['nearCapacity', 'defaultLowStock', 'lowStock'].includes(k)) fail(k, 'is not a display setting (known: nearCapacity, defaultLowStock, lowStock)');
  const share = (v: unknown, field: string, min: number): number => {
    if (typeof v !== 'number' || !Number.isFinite(v) || v > 1 || v < min) fail(field, `must be a number from ${min} to 1, got ${typeof v === 'number' ? String(v) : JSON.stringify(v)}`);
    return v as number;
  };
  const lowStock: Record<string, number> = { ...current.lowStock };
  if (c.lowStock !== undefined) {
    if (typeof c.lowStock !== 'object' || c.lowStock === null || Array.isArray(c.lowStock)) fail('lowStock', 'must be an object of "camera/zone": fill');
    const entries = Object.entries(c.lowStock as Record<string, unknown>);
    if (entries.length > 10_000) fail('lowStock', 'has too many entries');
    for (const [key, v] of entries) {
      if (!ZONE_KEY.test(key)) fail(`lowStock["${key.slice(0, 80)}"]`, 'must be keyed "camera/zone" (ids of letters, digits, - and _)');
      if (v === null) delete lowStock[key];
      else lowStock[key] = share(v, `lowStock["${key}"]`, 0);
    }
  }
  return {
    nearCapacity: c.nearCapacity === undefined ? current.nearCapacity : share(c.nearCapacity, 'nearCapacity', MIN_NEAR_CAPACITY),
    defaultLowStock: c.defaultLowStock === undefined ? current.defaultLowStock : share(c.defaultLowStock, 'defaultLowStock', 0),
    lowStock,
  };
}
