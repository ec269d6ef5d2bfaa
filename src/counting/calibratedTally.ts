import type { Mask } from '../domain/frame.ts';
import { measureZoneForeground } from '../vision/measureZoneForeground.ts';
import type { PreparedZone } from '../vision/prepareZones.ts';
import type { FrameTally } from '../vision/tallyZones.ts';
import { fitCountRegression, predictCount, type CalibrationPoint, type CountFeatures, type CountRegression, type CountRegressionFit } from './fitCountRegression.ts';

/**
 * The count features of each room zone in one counted frame (fitCountRegression's order): the
 * blob rule's count (after following, as the zone would report it), the perspective-normalised
 * foreground area and edge of the zone (measureZoneForeground on the frame's cleaned mask) and
 * the number of blobs the zone kept. Shelves are not calibrated. `only`: just the zones it has (a set or a map by zone id).
 */
export function zoneCountFeatures(tally: FrameTally, mask: Mask, zones: readonly PreparedZone[], only?: { has(id: string): boolean }): Map<string, CountFeatures> {
  const rooms = zones.filter((zone) => zone.kind === 'room' && (only === undefined || only.has(zone.id)));
  const foreground = measureZoneForeground(mask, rooms);
  const features = new Map<string, CountFeatures>();
  rooms.forEach((zone, i) => {
    const t = tally.zones[zone.id];
    if (t === undefined) return;
    features.set(zone.id, [t.count, foreground[i].area, foreground[i].edge, t.blobs]);
  });
  return features;
}

/**
 * The tally with each calibrated room zone counted by its regression. The total changes by the
 * same amounts (where calibrated zones overlap, a blob in both was counted once in the total and
 * its change is then counted twice; zones of one camera rarely overlap).
 */
export function calibratedTally<T extends FrameTally>(tally: T, features: ReadonlyMap<string, CountFeatures>, regressions: ReadonlyMap<string, CountRegression>): T {
  if (regressions.size === 0) return tally;
  const zones = { ...tally.zones };
  let total = tally.total;
  for (const [id, regression] of regressions) {
    const f = features.get(id);
    const before = zones[id];
    if (f === undefined || before === undefined) continue;
    const count = predictCount(regression, f);
    total += count - before.count;
    zones[id] = { ...before, count };
  }
  return { ...tally, total: Math.max(0, total), zones };
}

/** What calibration of a zone came to, in one line of plain words. */
export function describeCalibration(zone: string, fit: Omit<CountRegressionFit, 'regression'>): string {
  const given = `${fit.points} count${fit.points === 1 ? '' : 's'} given`;
  if (fit.reason !== undefined) return `zone ${zone}: not calibrated (${fit.reason}); counted by blob sizes`;
  const errors =
    `counts from the calibration are off by ${fit.leaveOneOutError.toFixed(2)} people on average when each given count is left out of the fit in turn, ` +
    `counts by blob sizes by ${fit.ruleError.toFixed(2)}`;
  return `zone ${zone}: ${given}; ${errors}: ${fit.use ? 'calibration used' : 'calibration not used, blob sizes are closer'}`;
}

/** Fits each zone's regression from its calibration points (fitCountRegression). */
export function fitZoneCalibrations(points: ReadonlyMap<string, readonly CalibrationPoint[]>): Map<string, CountRegressionFit> {
  const fits = new Map<string, CountRegressionFit>();
  for (const [zone, list] of points) fits.set(zone, fitCountRegression(list));
  return fits;
}

/** The regressions that beat the blob rule, by zone. */
export function regressionsInUse(fits: ReadonlyMap<string, CountRegressionFit>): Map<string, CountRegression> {
  const used = new Map<string, CountRegression>();
  for (const [zone, fit] of fits) if (fit.use && fit.regression !== undefined) used.set(zone, fit.regression);
  return used;
}
