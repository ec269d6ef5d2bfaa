import type { CalibrationStore, StoredCalibrationPoint } from '../store/calibration.ts';
import { describeCalibration } from './calibratedTally.ts';
import { fitCountRegression, type CountRegression, type CountRegressionFit } from './fitCountRegression.ts';
import type { Zone } from '../domain/zone.ts';

/** Calibration that cannot be done now (no recent frame, view changed, not a room zone): the HTTP layer answers 409. */
export class CalibrationError extends Error {
  override name = 'CalibrationError';
}

/**
 * What the count features of a zone depend on besides the scene: its polygon, how blobs are
 * assigned and kept, its person size and the threshold (the camera's where the zone sets none).
 * Points measured under another key are not used: after the zone is redrawn or its person size
 * changed, calibration starts again.
 */
export function zoneShapeKey(zone: Zone, cameraThreshold: number): string {
  return JSON.stringify({
    polygon: zone.polygon,
    anchor: zone.anchor ?? null,
    threshold: zone.threshold ?? cameraThreshold,
    minBlobArea: zone.minBlobArea ?? null,
    personArea: zone.personArea ?? null,
    perspective: zone.perspective?.map((r) => [r.y, r.area]) ?? null,
  });
}

/** A zone's calibration as the dashboard shows it: the counts given and what the fit came to. Numbers only. */
export interface ZoneCalibrationStatus {
  readonly zone: string;
  /** The counts given for the zone's present shape, oldest first. */
  readonly points: readonly { readonly time: number; readonly count: number; readonly counted: number; readonly givenBy: string }[];
  /** Counts given for an earlier shape or person size of the zone, not used. */
  readonly earlierShape: number;
  readonly fit: Omit<CountRegressionFit, 'regression'>;
  /** The zone is counted by its regression. */
  readonly inUse: boolean;
  /** In plain words. */
  readonly text: string;
}

/** Fits a zone's regression from its stored points of the present shape. */
export function fitStoredCalibration(store: Pick<CalibrationStore, 'listCalibrationPoints'>, camera: string, zone: Zone, cameraThreshold: number): { status: ZoneCalibrationStatus; regression?: CountRegression } {
  const key = zoneShapeKey(zone, cameraThreshold);
  const all = store.listCalibrationPoints(camera, zone.id);
  const current = all.filter((p) => p.zoneShape === key);
  const { regression, ...fit } = fitCountRegression(current.map((p: StoredCalibrationPoint) => ({ features: p.features, count: p.count })));
  const status: ZoneCalibrationStatus = {
    zone: zone.id,
    points: current.map((p) => ({ time: p.time, count: p.count, counted: p.features[0], givenBy: p.givenBy })),
    earlierShape: all.length - current.length,
    fit,
    inUse: fit.use,
    text: describeCalibration(zone.name ?? zone.id, fit),
  };
  return { status, ...(fit.use && regression !== undefined && { regression }) };
}

/** The regressions in use for a camera's room zones. */
export function storedRegressions(store: Pick<CalibrationStore, 'listCalibrationPoints'>, camera: string, zones: readonly Zone[], cameraThreshold: number): Map<string, CountRegression> {
  const regressions = new Map<string, CountRegression>();
  for (const zone of zones) {
    if (zone.kind !== 'room') continue;
    const { regression } = fitStoredCalibration(store, camera, zone, cameraThreshold);
    if (regression !== undefined) regressions.set(zone.id, regression);
  }
  return regressions;
}
