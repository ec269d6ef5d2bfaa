import type { Zone } from '../domain/zone.ts';

/**
 * Who wins when a camera's zones are both in the configuration file and edited in the dashboard.
 *
 * The rule: the configuration *seeds* the zones the first time a camera is seen; afterwards the
 * zones in the database (what the dashboard saved) are the ones counted, and the configuration
 * only matters where the file itself changed since the last start. Those changes — compared
 * field by field against what the file said last time (kept in the database) — are applied on top
 * of the database's zones:
 * - a zone added to the file is added (replacing a dashboard zone of the same id);
 * - a zone taken out of the file is removed;
 * - a field changed in the file (say `capacity: 6 → 8`) is set on that zone, the zone's other
 *   fields keep their dashboard values; a zone the dashboard removed is not brought back by a
 *   changed field (the change is reported as not applied).
 *
 * ```ts
 * reconcileZones({ config: [stacks8], lastConfig: [stacks6], stored: [stacks6WithDashboardPolygon] })
 * // → zones: [stacks with the dashboard's polygon and capacity 8],
 * //   changes: [{ zone: 'stacks', field: 'capacity', old: 6, new: 8, applied: true }]
 * ```
 */
export interface ReconcileZonesInput {
  /** The zones the configuration file gives now. */
  readonly config: readonly Zone[];
  /** What the file gave at the last start (stored in the database), or undefined when never recorded. */
  readonly lastConfig: readonly Zone[] | undefined;
  /** The zones active in the database now (the dashboard's last save, or the last start's result). */
  readonly stored: readonly Zone[];
}

/** One difference between the file now and the file last time. */
export interface ZoneConfigChange {
  readonly zone: string;
  /** A zone field, or `*` for the whole zone (added or removed). */
  readonly field: string;
  /** The file's value last time; null when absent (or the zone was not in the file). */
  readonly old: unknown;
  /** The file's value now; null when absent (or the zone was taken out of the file). */
  readonly new: unknown;
  /** False when the change could not be applied (the zone was removed in the dashboard). */
  readonly applied: boolean;
}

export interface ReconciledZones {
  /** The zones to count with, in the order: stored zones first (their order), then added ones. */
  readonly zones: Zone[];
  /** What changed in the file since last time (empty: nothing; the stored zones stay as they are). */
  readonly changes: ZoneConfigChange[];
  /** How the zones were chosen. */
  readonly basis: 'seeded' | 'stored' | 'merged';
}

/** Zone fields in the order they are compared and reported. */
const FIELDS = ['name', 'kind', 'polygon', 'threshold', 'minBlobArea', 'personArea', 'perspective', 'anchor', 'capacity', 'absorbSeconds'] as const;

export function reconcileZones(input: ReconcileZonesInput): ReconciledZones {
  const { config, lastConfig, stored } = input;
  // First start (or a database that has no zones for the camera): the file seeds them.
  if (stored.length === 0 && (lastConfig === undefined || lastConfig.length === 0)) {
    return { zones: config.map((z) => ({ ...z })), changes: [], basis: 'seeded' };
  }
  // A database from before the file's zones were recorded: what it holds was the file's zones
  // at the last start plus the dashboard's edits since, so it is kept as it is.
  if (lastConfig === undefined) return { zones: stored.map((z) => ({ ...z })), changes: [], basis: 'stored' };

  const before = new Map(lastConfig.map((z) => [z.id, z]));
  const now = new Map(config.map((z) => [z.id, z]));
  const result = new Map(stored.map((z) => [z.id, { ...z } as Record<string, unknown>]));
  const changes: ZoneConfigChange[] = [];
  for (const [id, zone] of now) {
    const old = before.get(id);
    if (old === undefined) {
      result.set(id, { ...zone });
      changes.push({ zone: id, field: '*', old: null, new: zone, applied: true });
      continue;
    }
    for (const field of FIELDS) {
      const a = (old as unknown as Record<string, unknown>)[field];
      const b = (zone as unknown as Record<string, unknown>)[field];
      if (JSON.stringify(a) === JSON.stringify(b)) continue;
      const target = result.get(id);
      if (target) {
        if (b === undefined) delete target[field];
        else target[field] = b;
      }
      changes.push({ zone: id, field, old: a ?? null, new: b ?? null, applied: target !== undefined });
    }
  }
  for (const [id, zone] of before) {
    if (now.has(id)) continue;
    const applied = result.delete(id);
    changes.push({ zone: id, field: '*', old: zone, new: null, applied });
  }
  return { zones: [...result.values()] as unknown as Zone[], changes, basis: changes.length === 0 ? 'stored' : 'merged' };
}

/** A change in plain words: `stacks capacity 6 → 8`, `zone lounge added`, `zone door removed`. */
export function describeZoneChange(change: ZoneConfigChange): string {
  const show = (v: unknown) => (v === null ? 'unset' : JSON.stringify(v));
  const structured = (v: unknown) => typeof v === 'object' && v !== null;
  let text: string;
  if (change.field === '*') text = change.new === null ? `zone ${change.zone} removed` : `zone ${change.zone} added`;
  else if (structured(change.old) || structured(change.new)) text = `${change.zone} ${change.field} changed`;
  else text = `${change.zone} ${change.field} ${show(change.old)} → ${show(change.new)}`;
  return change.applied ? text : `${text} (not applied: the zone was removed in the dashboard)`;
}
