/**
 * The plaza's camera (plaza.ts): a pinhole camera high above a flat ground plane, its optical
 * axis level and its picture shifted downwards (the "rise" of a view camera, or a crop from the
 * lower part of a wide sensor), so that the view looks obliquely down on the square while
 * vertical lines stay vertical.
 *
 * For a ground point at depth Z (metres along the axis) and lateral offset X (metres, right
 * positive), with y normalised to the frame height (0 top, 1 bottom, y down) and x to the frame
 * width:
 *
 *   y = y_h + F·H_c / Z        x = 0.5 + F·(height/width)·X / Z
 *
 * where y_h is the horizon row, F the focal length in frame heights and H_c the camera height. An
 * upright person of height H standing at depth Z spans F·H / Z of the frame height, so their
 * drawn height is proportional to the distance of their foot row from the horizon:
 *
 *   h(y) = (H / H_c)·(y − y_h)
 *
 * (the relation Hoiem, Efros & Hebert use in "Putting objects in perspective", CVPR 2006). Here
 * the drawn height at the bottom row, h(1), is given, which fixes H / H_c for H = 1.7 m.
 *
 * Example: plazaGeometry({ width: 320, height: 240 }, { horizon: -0.02, nearHeight: 0.28 })
 * .heightAt(0.25) ≈ 0.074 (a person at the far edge of the paving is 18 px tall at 240 rows).
 */

/** Height of the mean standing person, metres. */
export const PERSON_HEIGHT_M = 1.7;
/** Focal length in frame heights (about 45° of vertical field of view). */
export const FOCAL = 1.2;

export interface PlazaGeometryOptions {
  /** Horizon row, normalised (negative: above the frame); must lie above the paving's far edge. */
  horizon: number;
  /** Drawn height of a standing person whose feet are on the bottom row, fraction of the frame height. */
  nearHeight: number;
  /** Far edge of the paving (the façade's base), normalised row. */
  pavingTop: number;
}

export interface PlazaGeometry {
  readonly width: number;
  readonly height: number;
  readonly horizon: number;
  /** Drawn height per unit of (y − horizon): H / H_c. */
  readonly slope: number;
  /** F·H_c: y − horizon = depthScale / Z (Z in metres). */
  readonly depthScale: number;
  /** F·height/width: x − 0.5 = lateralScale·X / Z. */
  readonly lateralScale: number;
  /** Depth of the bottom row and of the paving's far edge, metres. */
  readonly zNear: number;
  readonly zFar: number;
  readonly pavingTop: number;
  /** Depth (metres) of ground row y (y > horizon). */
  depthAt(y: number): number;
  /** Row of the ground at depth Z (metres). */
  rowAt(z: number): number;
  /** Normalised x of the ground point (X, Z). */
  columnAt(x: number, z: number): number;
  /** Lateral ground offset X (metres) of column x at depth Z. */
  lateralAt(x: number, z: number): number;
  /** Drawn height of a standing person of mean size with feet on row y, fraction of the frame height. */
  heightAt(y: number): number;
}

export function plazaGeometry(size: { width: number; height: number }, options: PlazaGeometryOptions): PlazaGeometry {
  const { horizon, nearHeight, pavingTop } = options;
  const { width, height } = size;
  const slope = nearHeight / (1 - horizon);
  const cameraHeight = PERSON_HEIGHT_M / slope;
  const depthScale = FOCAL * cameraHeight;
  const lateralScale = (FOCAL * height) / width;
  return {
    width,
    height,
    horizon,
    slope,
    depthScale,
    lateralScale,
    zNear: depthScale / (1 - horizon),
    zFar: depthScale / (pavingTop - horizon),
    pavingTop,
    depthAt: (y) => depthScale / (y - horizon),
    rowAt: (z) => horizon + depthScale / z,
    columnAt: (x, z) => 0.5 + (lateralScale * x) / z,
    lateralAt: (x, z) => ((x - 0.5) * z) / lateralScale,
    heightAt: (y) => slope * (y - horizon),
  };
}
