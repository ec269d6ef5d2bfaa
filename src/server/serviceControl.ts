import type { EventEmitter } from 'node:events';
import type { CameraLive, LearnStatus } from '../counting/cameraPipeline.ts';
import type { Zone } from '../domain/zone.ts';
import type { ModelVerdict } from '../counting/modelVerdict.ts';
import type { ZoneCalibrationStatus } from '../counting/zoneCalibration.ts';

/** An 8-bit grey image (the learned empty scene) or a coarse 0/1 mask; row-major, x right, y down. */
export interface SmallImage {
  readonly width: number;
  readonly height: number;
  readonly data: Uint8Array;
}

/** Figures of a camera's current model, for the dashboard. */
export interface ModelSummary {
  /** Its stored id, when it is stored. */
  readonly id?: number;
  readonly width: number;
  readonly height: number;
  readonly components: number;
  readonly retainedVariance: number;
  readonly frames: number;
  readonly verdict: ModelVerdict;
}

/** One of a camera's kept models, as the admin's list shows it: figures and verdict, never pixels. */
export interface KeptModel {
  readonly id: number;
  /** When it was learned (stored), UTC epoch ms. */
  readonly learnedAt: number;
  /** Learning frames it was fitted to; null when not recorded. */
  readonly frames: number | null;
  /** Eigen-images kept. */
  readonly components: number;
  readonly width: number;
  readonly height: number;
  /** Where it came from: `live source`, a model file, `synthetic:<scene>:empty`, …; null when not recorded. */
  readonly source: string | null;
  /** Its verdict when it was learned: level and findings in plain sentences. */
  readonly verdict: Pick<ModelVerdict, 'level' | 'findings'>;
  /** The camera counts with it. */
  readonly active: boolean;
  /** Learned but judged not usable, so it was not put to use then. */
  readonly rejected: boolean;
}

/**
 * What the HTTP layer may ask of the running service. Nothing here hands out a frame: the
 * background is the learned empty scene (no people in it by construction) and the mask preview
 * is a coarse binary mask of the last frame, computed on request and never stored.
 *
 * Events: `live` (CameraLive) whenever a camera's counts or state change; `learn`
 * ({ camera, status: LearnStatus }) while a camera learns.
 */
export interface ServiceControl extends EventEmitter {
  cameras(): readonly CameraLive[];
  /** The camera's zones as counted now; undefined for an unknown camera. */
  zones(camera: string): readonly Zone[] | undefined;
  /**
   * Validates zones (as parsed JSON), stores them with their history (when, what, old → new),
   * and applies them to counting at once. Throws ZoneError (→ 400) naming the field, or
   * RangeError for an unknown camera (→ 404).
   */
  setZones(camera: string, zones: unknown): readonly Zone[];
  /** The model's mean image as 8-bit grey; undefined without a model. */
  background(camera: string): SmallImage | undefined;
  /** The model's figures; undefined without a model. */
  modelSummary(camera: string): ModelSummary | undefined;
  /** The last frame's foreground mask reduced by `cell` pixels per side (a cell is 1 when any pixel in it is); undefined when nothing was counted yet. */
  maskPreview(camera: string, cell?: number): SmallImage | undefined;
  /** Starts learning the empty scene from the next `seconds` of the live source. */
  learn(camera: string, seconds: number): LearnStatus;
  learnStatus(camera: string): LearnStatus | undefined;
  /** The camera's kept models, newest first; undefined for an unknown camera. */
  models(camera: string): readonly KeptModel[] | undefined;
  /**
   * Makes kept model `id` the camera's active model and has the camera count with it from its
   * next frame (no restart); stores a `model-activated` event naming the model and `by`.
   * Undefined when the camera has no model `id`; throws RangeError for an unknown camera and
   * ModelChoiceError for a model that does not fit the camera (another working size, unreadable).
   */
  activateModel(camera: string, id: number, by: string): { readonly model: KeptModel; readonly changed: boolean } | undefined;
  /** The calibration of the camera's room zones (all, or just `zone`); undefined for an unknown camera. */
  calibration(camera: string, zone?: string): readonly ZoneCalibrationStatus[] | undefined;
  /**
   * "There are `count` people in `zone` now", given by `by` (see CameraPipeline.calibrate).
   * Rejects with CalibrationError (→ 409) when the camera cannot take it now, RangeError for an
   * unknown camera (→ 404).
   */
  calibrate(camera: string, zone: string, count: number, by: string): Promise<ZoneCalibrationStatus>;
  /** Removes a room zone's calibration points (event `calibration-cleared` by `by`); returns how many. */
  clearCalibration(camera: string, zone: string, by: string): number;
  /**
   * Adds a camera (a parsed JSON body: id, name, source { kind: snapshot | mjpeg, url, … }, size,
   * learnSeconds, sampleSeconds, zones) after checking that its source gives a picture; stores it
   * so that it survives restarts and starts it at once. Throws CameraSetupError (400 naming the
   * field, 409 for an id in use). Absent when the service cannot add cameras.
   */
  addCamera?(raw: unknown, by: string): Promise<AddedCamera>;
  /** Stops and forgets a camera added with addCamera (its stored counts stay); CameraSetupError 404 or 409 (a camera of the configuration file). */
  removeCamera?(id: string, by: string): Promise<void>;
}

/** A camera just added: what it is, never its password. */
export interface AddedCamera {
  readonly id: string;
  readonly name: string;
  readonly kind: string;
  /** The source URL without credentials and query values. */
  readonly url: string;
  /** Working size [width, height]. */
  readonly size: readonly [number, number];
  /** The camera's own picture size, when known. */
  readonly sourceSize?: readonly [number, number];
  /** Without a stored model, the camera learns the empty scene from this many seconds of frames first. */
  readonly learnSeconds: number;
  readonly state: string;
}

/** A camera that cannot be added or removed; `status` is the HTTP status to answer. */
export class CameraSetupError extends Error {
  override name = 'CameraSetupError';
  constructor(
    readonly status: 400 | 404 | 409,
    message: string,
  ) {
    super(message);
  }
}

/** A kept model that cannot be put to use (another working size than the camera's, or unreadable). */
export class ModelChoiceError extends Error {
  override name = 'ModelChoiceError';
}
