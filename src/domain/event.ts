/**
 * Events: things that happened to a camera or zone, with a JSON detail. They are the log a
 * facilities user reads next to the numbers ("camera offline 02:10–02:40" explains a coverage gap).
 * Events are kept until deleted (no retention).
 */

/** Event types. Add new ones here; the store refuses any other string. */
export const EventType = {
  /** The camera stopped delivering frames. */
  offline: 'offline',
  /** The camera delivers frames again. */
  online: 'online',
  /** The view no longer matches the learned empty scene (moved, covered). */
  viewChanged: 'view-changed',
  /** The view matches the learned scene again. */
  viewRestored: 'view-restored',
  /** A room zone's count went above its capacity. */
  capacityExceeded: 'capacity-exceeded',
  /** A new empty-scene model was learned, stored and put to use. */
  modelLearned: 'model-learned',
  /** A model was learned but judged not usable: stored as rejected, the camera kept its model. */
  learningRejected: 'learning-rejected',
  /** An admin put a kept model to use (a roll-back). */
  modelActivated: 'model-activated',
  /** The model is older than its validity or drifted. */
  modelStale: 'model-stale',
  /** Settings (zones, thresholds) were changed. */
  settingsChanged: 'settings-changed',
  /** Someone gave the number of people in a room zone (a calibration point). */
  calibrationAdded: 'calibration-added',
  /** A room zone's calibration points were removed. */
  calibrationCleared: 'calibration-cleared',
  /** An alert (over capacity, low stock, camera offline) was delivered to a webhook or by e-mail. */
  alertSent: 'alert-sent',
  /** An alert could not be delivered (after its retries); the detail says why. */
  alertFailed: 'alert-failed',
} as const;
export type EventType = (typeof EventType)[keyof typeof EventType];

export interface EventInput {
  /** When it happened, UTC epoch ms; default the store's clock. */
  readonly time?: number;
  readonly camera: string;
  /** The zone concerned, if any; default null (the whole camera). */
  readonly zone?: string | null;
  readonly type: EventType;
  /** Any JSON-representable detail; default `{}`. Never pixels of a frame. */
  readonly detail?: unknown;
}

export interface StoredEvent {
  readonly id: number;
  readonly time: number;
  readonly camera: string;
  readonly zone: string | null;
  readonly type: EventType;
  readonly detail: unknown;
}
