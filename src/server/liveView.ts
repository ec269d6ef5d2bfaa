import type { CameraLive, LearnStatus, ZoneLive } from '../counting/cameraPipeline.ts';

/**
 * What the dashboard shows of the live counts: each camera's plain status and each zone's level
 * against its capacity (rooms) or low-stock mark (shelves), computed on the server so the API and
 * the page agree.
 */

/** A camera's status for display. Anything but `counting` means: do not read the counts as current. */
export const CameraStatus = {
  /** Frames arrive and are counted with a model that fits the view. */
  counting: 'counting',
  /** Connecting or reconnecting to the source; no frames yet. */
  connecting: 'connecting',
  /** The source delivers no frames. */
  offline: 'offline',
  /** The empty scene is being learned; nothing is counted yet. */
  learning: 'learning',
  /** The view no longer matches the learned empty scene (moved, covered, lights off). */
  viewChanged: 'view-changed',
  /** The source says online but no frame came for a while. */
  stale: 'stale',
  /** The service is stopping. */
  stopped: 'stopped',
} as const;
export type CameraStatus = (typeof CameraStatus)[keyof typeof CameraStatus];

/** A zone's level. */
export const ZoneLevel = {
  /** Room: count below the near mark of the capacity. */
  below: 'below',
  /** Room: count at or above the near mark, up to the capacity. */
  near: 'near',
  /** Room: count above the capacity. */
  over: 'over',
  /** Room without a capacity: the count alone. */
  counted: 'counted',
  /** Shelf: fill at or above the low-stock mark. */
  stocked: 'stocked',
  /** Shelf: fill below the low-stock mark. */
  low: 'low',
  /** The camera is not counting (see its status): no current value. */
  unknown: 'unknown',
} as const;
export type ZoneLevel = (typeof ZoneLevel)[keyof typeof ZoneLevel];

export interface ZoneView extends ZoneLive {
  readonly level: ZoneLevel;
  /** Rooms: people shown (the smoothed count rounded to a whole person); shelves: items. */
  readonly shown: number;
  /** Rooms with a capacity: shown ÷ capacity. */
  readonly share?: number;
  /** Shelves: the low-stock mark in force, 0..1. */
  readonly lowStock?: number;
}

export interface CameraView extends Omit<CameraLive, 'zones'> {
  readonly status: CameraStatus;
  /** Learning from the live source, while it runs or when it ended in the last hour. */
  readonly learn?: LearnStatus;
  readonly zones: readonly ZoneView[];
}

export interface LiveViewResult {
  /** The near mark in force, share of capacity. */
  readonly nearCapacity: number;
  readonly cameras: readonly CameraView[];
}

export interface LiveViewOptions {
  /** "Now", epoch ms; default `Date.now()`. */
  readonly now?: number;
  /** A room is `near` when shown ≥ nearCapacity × capacity; share in (0, 1], default 0.8. */
  readonly nearCapacity?: number;
  /** A shelf is `low` when fill < its mark, 0..1; default 0.15. */
  readonly defaultLowStock?: number;
  /** Per-zone low-stock marks keyed `camera/zone`, 0..1; default none. */
  readonly lowStock?: Readonly<Record<string, number>>;
  /** An online camera without a frame for longer than this is `stale`, ms (exclusive); default 120 000. */
  readonly staleAfterMs?: number;
  /** The camera's learning status, if known. */
  readonly learn?: (camera: string) => LearnStatus | undefined;
}

/**
 * Adds statuses and levels to the pipelines' live state.
 *
 * ```ts
 * liveView([{ camera: 'hall', name: 'Hall', state: 'online', viewChanged: false, lastFrameAt: now,
 *   zones: [{ id: 'a', name: 'A', kind: 'room', count: 7.6, fill: 0.1, capacity: 10 }] }], { now })
 * // → cameras[0].status 'counting', zones[0] { shown: 8, share: 0.8, level: 'near' }
 * ```
 */
export function liveView(cameras: readonly CameraLive[], options: LiveViewOptions = {}): LiveViewResult {
  const { now = Date.now(), nearCapacity = 0.8, defaultLowStock = 0.15, lowStock = {}, staleAfterMs = 120_000, learn } = options;
  return {
    nearCapacity,
    cameras: cameras.map((c) => {
      const status = cameraStatus(c, now, staleAfterMs);
      const learning = learn?.(c.camera);
      const recent = learning && (learning.state === 'learning' || (learning.finishedAt !== undefined && now - learning.finishedAt < 3_600_000));
      return {
        ...c,
        status,
        ...(recent && { learn: learning }),
        zones: c.zones.map((z) => zoneView(z, status === CameraStatus.counting, nearCapacity, lowStock[`${c.camera}/${z.id}`] ?? defaultLowStock)),
      };
    }),
  };
}

function cameraStatus(c: CameraLive, now: number, staleAfterMs: number): CameraStatus {
  switch (c.state) {
    case 'stopped':
      return CameraStatus.stopped;
    case 'offline':
      return CameraStatus.offline;
    case 'learning':
      return CameraStatus.learning;
    case 'connecting':
      return CameraStatus.connecting;
    case 'online':
      if (c.lastFrameAt === undefined) return CameraStatus.connecting;
      if (c.viewChanged) return CameraStatus.viewChanged;
      return now - c.lastFrameAt > staleAfterMs ? CameraStatus.stale : CameraStatus.counting;
    default: {
      const never: never = c.state;
      return never;
    }
  }
}

function zoneView(z: ZoneLive, counting: boolean, nearCapacity: number, lowStock: number): ZoneView {
  const shown = Math.max(0, Math.round(z.count));
  if (z.kind === 'shelf') {
    return { ...z, shown, lowStock, level: !counting ? ZoneLevel.unknown : z.fill < lowStock ? ZoneLevel.low : ZoneLevel.stocked };
  }
  if (z.capacity === undefined) return { ...z, shown, level: counting ? ZoneLevel.counted : ZoneLevel.unknown };
  const share = z.capacity > 0 ? shown / z.capacity : shown > 0 ? Infinity : 0;
  let level: ZoneLevel = ZoneLevel.unknown;
  if (counting) level = shown > z.capacity ? ZoneLevel.over : z.capacity > 0 && shown >= nearCapacity * z.capacity ? ZoneLevel.near : ZoneLevel.below;
  return { ...z, shown, ...(Number.isFinite(share) && { share: Math.round(share * 1000) / 1000 }), level };
}
