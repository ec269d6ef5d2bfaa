/**
 * The alert rules as a pure state machine: one observation of the live view in, the new state and
 * the alerts to send out. No clock, no I/O; `startAlerts` feeds it once a second.
 *
 * Three conditions are watched:
 * - `over-capacity`: a room zone with a capacity shows more people than it (the dashboard's
 *   level `over`);
 * - `low-stock`: a shelf zone's fill is below its low-stock mark (level `low`);
 * - `camera-offline`: a camera's status is `offline`, or `stale` (online but no frame for the
 *   dashboard's stale time).
 *
 * Hysteresis by a quiet period, so that one event is one message: a condition that appears sends
 * `started` at once; when it goes away it is only *clearing*; if it comes back within `quietMs`
 * it is the same event (no message); once it has stayed away for `quietMs` an `ended` message is
 * sent, dated when it really ended. A zone hovering at its capacity therefore sends one `started`
 * and, after it has stayed within capacity for the quiet period, one `ended` — not one message per
 * sample. (The same idea as a thermostat's dead band, here in time: common practice in alarm
 * handling, cf. the "alarm deadband" and "off-delay" of IEC 62682 / ISA-18.2, recalled from memory.)
 *
 * What cannot be judged leaves the state alone: a zone whose camera is not counting (level
 * `unknown`) neither starts nor ends its alerts, and a camera that is `connecting` (between retries)
 * or `stopped` neither. A condition whose camera or zone is gone (removed) is dropped silently.
 *
 * ```ts
 * let state = emptyAlertState();
 * ({ state, alerts } = evaluateAlerts(state, { time: 0, cameras: [hall(11)] }, { quietMs: 60_000 }));
 * // alerts: [{ rule: 'over-capacity', phase: 'started', camera: 'hall', zone: 'floor', … }]
 * ({ state, alerts } = evaluateAlerts(state, { time: 1000, cameras: [hall(9)] }, { quietMs: 60_000 })); // []
 * ({ state, alerts } = evaluateAlerts(state, { time: 2000, cameras: [hall(12)] }, { quietMs: 60_000 })); // [] (same event)
 * ({ state, alerts } = evaluateAlerts(state, { time: 70_000, cameras: [hall(9)] }, { quietMs: 60_000 })); // []: clearing since 70 000
 * ({ state, alerts } = evaluateAlerts(state, { time: 130_000, cameras: [hall(9)] }, { quietMs: 60_000 }));
 * // [{ phase: 'ended', at: 70_000, since: 0, … }]
 * ```
 */

/** The conditions alerts are sent for. */
export const AlertRule = {
  overCapacity: 'over-capacity',
  lowStock: 'low-stock',
  cameraOffline: 'camera-offline',
} as const;
export type AlertRule = (typeof AlertRule)[keyof typeof AlertRule];

export const ALERT_RULES: readonly AlertRule[] = Object.values(AlertRule);

/** Which end of an event a message is about. */
export const AlertPhase = { started: 'started', ended: 'ended' } as const;
export type AlertPhase = (typeof AlertPhase)[keyof typeof AlertPhase];

/** A zone as the live view shows it (src/server/liveView.ts ZoneView has these fields). */
export interface ObservedZone {
  readonly id: string;
  readonly name: string;
  readonly kind: 'room' | 'shelf';
  /** People or items shown (whole). */
  readonly shown: number;
  /** Foreground share of the zone, 0..1. */
  readonly fill: number;
  readonly capacity?: number;
  /** Shelves: the low-stock mark in force, 0..1. */
  readonly lowStock?: number;
  /** `over`, `low`, `below`, `near`, `stocked`, `counted` or `unknown`. */
  readonly level: string;
}

/** A camera as the live view shows it (src/server/liveView.ts CameraView has these fields). */
export interface ObservedCamera {
  readonly camera: string;
  readonly name: string;
  /** `counting`, `connecting`, `offline`, `learning`, `view-changed`, `stale` or `stopped`. */
  readonly status: string;
  readonly reason?: string;
  readonly lastFrameAt?: number;
  readonly zones: readonly ObservedZone[];
}

export interface AlertObservation {
  /** When the view was taken, epoch ms. */
  readonly time: number;
  readonly cameras: readonly ObservedCamera[];
}

/** The figures an alert is about. */
export type AlertFigures =
  /** over-capacity: people shown and the zone's capacity; `peak`: the most shown during the event. */
  | { readonly count: number; readonly capacity: number; readonly peak: number }
  /** low-stock: fill and the mark; `lowest`: the lowest fill during the event. */
  | { readonly fill: number; readonly lowStock: number; readonly lowest: number }
  /** camera-offline: why (as the source says), and when the last frame came, if ever. */
  | { readonly reason: string | null; readonly lastFrameAt: number | null };

/** One message to send. */
export interface Alert {
  readonly rule: AlertRule;
  readonly phase: AlertPhase;
  readonly camera: string;
  readonly cameraName: string;
  /** The zone, for zone rules. */
  readonly zone?: string;
  readonly zoneName?: string;
  /** When the event began, epoch ms. */
  readonly since: number;
  /** When this phase happened, epoch ms: `since` for started, when the condition went away for ended. */
  readonly at: number;
  /** With `started`: the figures at the start; with `ended`: the last figures seen while it held (with the peak or lowest). */
  readonly figures: AlertFigures;
}

/** One watched condition in force (active) or going away (clearing). */
interface Track {
  readonly since: number;
  /** Set while clearing: when the condition went away. */
  readonly clearedAt?: number;
  readonly figures: AlertFigures;
  readonly cameraName: string;
  readonly zoneName?: string;
}

/** The state between two observations (treat as opaque). */
export type AlertState = ReadonlyMap<string, Track>;

export function emptyAlertState(): AlertState {
  return new Map();
}

export interface EvaluateAlertsOptions {
  /** How long a condition must stay away before its event ends, ms ≥ 0; default 300 000 (5 minutes). */
  readonly quietMs?: number;
  /** The rules watched; default all. A rule left out keeps no state and sends nothing. */
  readonly rules?: readonly AlertRule[];
}

/** true: the condition holds; false: it does not; undefined: cannot be judged now. */
type Judgement = { readonly holds: boolean | undefined; readonly figures?: AlertFigures };

/**
 * The alerts one observation gives, and the state after it (the input state is not changed).
 * Observations must come in time order; an observation older than a track's start is still
 * handled (the times are only compared with `quietMs`).
 */
export function evaluateAlerts(
  state: AlertState,
  observation: AlertObservation,
  options: EvaluateAlertsOptions = {},
): { state: AlertState; alerts: Alert[] } {
  const { quietMs = 300_000, rules = ALERT_RULES } = options;
  if (!(Number.isFinite(quietMs) && quietMs >= 0)) throw new RangeError(`quietMs: expected milliseconds ≥ 0, got ${String(quietMs)}`);
  const time = observation.time;
  const next = new Map<string, Track>();
  const alerts: Alert[] = [];
  const seen = new Set<string>();

  const judge = (rule: AlertRule, camera: ObservedCamera, zone: ObservedZone | undefined, judgement: Judgement) => {
    if (!rules.includes(rule)) return;
    const key = zone ? `${rule}/${camera.camera}/${zone.id}` : `${rule}/${camera.camera}`;
    seen.add(key);
    const track = state.get(key);
    const names = { cameraName: camera.name, ...(zone && { zoneName: zone.name }) };
    const where = { camera: camera.camera, ...(zone && { zone: zone.id }) };
    const { holds, figures } = judgement;
    if (holds === true && figures) {
      if (!track) {
        next.set(key, { since: time, figures, ...names });
        alerts.push({ rule, phase: AlertPhase.started, ...where, ...names, since: time, at: time, figures });
      } else {
        next.set(key, { since: track.since, figures: merge(track.figures, figures), ...names });
      }
    } else if (holds === false && track) {
      const clearedAt = track.clearedAt ?? time;
      if (time - clearedAt >= quietMs) {
        alerts.push({ rule, phase: AlertPhase.ended, ...where, ...names, since: track.since, at: clearedAt, figures: track.figures });
      } else {
        next.set(key, { ...track, clearedAt, ...names });
      }
    } else if (track) {
      next.set(key, track);
    }
  };

  for (const camera of observation.cameras) {
    judge(AlertRule.cameraOffline, camera, undefined, offline(camera));
    for (const zone of camera.zones) {
      if (zone.kind === 'room') judge(AlertRule.overCapacity, camera, zone, overCapacity(zone));
      else judge(AlertRule.lowStock, camera, zone, lowStock(zone));
    }
  }
  // A condition not judged at all (its camera or zone is gone) is dropped: nothing to report on.
  for (const key of state.keys()) if (!seen.has(key)) next.delete(key);
  return { state: next, alerts };
}

function offline(camera: ObservedCamera): Judgement {
  switch (camera.status) {
    case 'offline':
    case 'stale':
      return {
        holds: true,
        figures: {
          reason: camera.status === 'stale' ? 'no frame for a while' : (camera.reason ?? null),
          lastFrameAt: camera.lastFrameAt ?? null,
        },
      };
    case 'counting':
    case 'learning':
    case 'view-changed':
      return { holds: false };
    default:
      // connecting (between retries, or at start), stopped: no judgement
      return { holds: undefined };
  }
}

function overCapacity(zone: ObservedZone): Judgement {
  if (zone.capacity === undefined) return { holds: undefined };
  switch (zone.level) {
    case 'over':
      return { holds: true, figures: { count: zone.shown, capacity: zone.capacity, peak: zone.shown } };
    case 'below':
    case 'near':
      return { holds: false };
    default:
      return { holds: undefined };
  }
}

function lowStock(zone: ObservedZone): Judgement {
  switch (zone.level) {
    case 'low':
      return { holds: true, figures: { fill: zone.fill, lowStock: zone.lowStock ?? 0, lowest: zone.fill } };
    case 'stocked':
      return { holds: false };
    default:
      return { holds: undefined };
  }
}

/** The latest figures, keeping the extreme of the event (peak count, lowest fill). */
function merge(before: AlertFigures, now: AlertFigures): AlertFigures {
  if ('peak' in before && 'peak' in now) return { ...now, peak: Math.max(before.peak, now.peak) };
  if ('lowest' in before && 'lowest' in now) return { ...now, lowest: Math.min(before.lowest, now.lowest) };
  return now;
}
