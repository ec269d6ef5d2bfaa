import type { CameraLive, ZoneLive } from '../../counting/cameraPipeline.ts';
import type { ZoneKind } from '../../domain/zone.ts';

/**
 * The state of one zone as published (retained) on `<prefix>/<site>/<camera>/<zone>/state`.
 *
 * States, first match wins:
 * - `learning`: the camera is learning the empty scene; no counts yet;
 * - `offline`: the camera delivers no frames (also while connecting and after the service stopped);
 * - `view-changed`: the view no longer matches the learned empty scene; counts are unreliable;
 * - rooms with a capacity: `over` when count > capacity (as the capacity-exceeded event),
 *   `near` when count ≥ 80 % of capacity (inclusive), else `below`;
 * - rooms without a capacity: `ok`;
 * - shelves: `low` when fill < lowFill (exclusive), else `ok`.
 *
 * In the first three states the value (`count` or `fill`) is null: there is no trustworthy count.
 *
 * Example: a room at 8 people of capacity 10 → `{ "kind": "room", "count": 8, "capacity": 10, "state": "near", … }`.
 */

export const ZoneStateName = {
  below: 'below',
  near: 'near',
  over: 'over',
  low: 'low',
  ok: 'ok',
  offline: 'offline',
  viewChanged: 'view-changed',
  learning: 'learning',
} as const;
export type ZoneStateName = (typeof ZoneStateName)[keyof typeof ZoneStateName];

/** Share of capacity from which a room is `near` (inclusive). */
export const NEAR_SHARE = 0.8;

/** The JSON body of a state message. */
export interface ZoneStateMessage {
  readonly camera: string;
  readonly cameraName: string;
  readonly zone: string;
  readonly zoneName: string;
  readonly kind: ZoneKind;
  /** Rooms: smoothed people; null without a trustworthy count. */
  readonly count?: number | null;
  /** Shelves: smoothed share covered, 0..1; null without a trustworthy value. */
  readonly fill?: number | null;
  readonly capacity?: number;
  readonly state: ZoneStateName;
  /** When the state was determined, ISO 8601 UTC. */
  readonly time: string;
}

export interface ZoneStateOptions {
  /** When, epoch ms; default Date.now(). */
  readonly time?: number;
  /** Shelves below this fill (exclusive) are `low`; 0..1, default 0.2. */
  readonly lowFill?: number;
}

/** The state message of one zone of a camera's live view. */
export function zoneState(live: CameraLive, zone: ZoneLive, options: ZoneStateOptions = {}): ZoneStateMessage {
  const { time = Date.now(), lowFill = 0.2 } = options;
  const unreliable: ZoneStateName | undefined =
    live.state === 'learning'
      ? ZoneStateName.learning
      : live.state !== 'online'
        ? ZoneStateName.offline
        : live.viewChanged
          ? ZoneStateName.viewChanged
          : undefined;
  let state: ZoneStateName;
  if (unreliable !== undefined) state = unreliable;
  else if (zone.kind === 'shelf') state = zone.fill < lowFill ? ZoneStateName.low : ZoneStateName.ok;
  else if (zone.capacity === undefined) state = ZoneStateName.ok;
  else if (zone.count > zone.capacity) state = ZoneStateName.over;
  else if (zone.capacity > 0 && zone.count >= NEAR_SHARE * zone.capacity) state = ZoneStateName.near;
  else state = ZoneStateName.below;
  const value = unreliable === undefined;
  return {
    camera: live.camera,
    cameraName: live.name,
    zone: zone.id,
    zoneName: zone.name,
    kind: zone.kind,
    ...(zone.kind === 'shelf' ? { fill: value ? zone.fill : null } : { count: value ? zone.count : null }),
    ...(zone.capacity !== undefined && { capacity: zone.capacity }),
    state,
    time: new Date(time).toISOString(),
  };
}
