import type { Alert } from './evaluateAlerts.ts';

/**
 * What an alert says, as the JSON body of a webhook and as an e-mail: plain words for a
 * facilities manager first, the figures after. Pure.
 */

/** Said in every alert: the counts are estimates, and an alert is not a life-safety system. */
export const ALERT_CAUTION =
  'Counts are estimates from a camera. This alert is not a life-safety or fire alarm system; ' +
  'the occupant load approved by the authority having jurisdiction governs.';

/** The JSON body of a webhook (and what the e-mail is made from). */
export interface AlertMessage {
  /** Format of this body; changes only with a new major version of it. */
  readonly format: 'residuum-alert/1';
  /** Unique per message: a receiver that gets it twice (a retry after a lost answer) can drop the copy. */
  readonly id: string;
  readonly site: string;
  readonly rule: Alert['rule'];
  readonly phase: Alert['phase'];
  readonly camera: string;
  readonly cameraName: string;
  readonly zone?: string;
  readonly zoneName?: string;
  /** When the event began, ISO 8601 UTC. */
  readonly since: string;
  /** When this phase happened (started: = since; ended: when the condition went away), ISO 8601 UTC. */
  readonly at: string;
  /** Figures: `count`, `capacity`, `peak` (over-capacity); `fill`, `lowStock`, `lowest` (low-stock, shares 0..1); `reason`, `lastFrameAt` (camera-offline). */
  readonly figures: Readonly<Record<string, number | string | null>>;
  /** One sentence in plain words. */
  readonly text: string;
  readonly caution: string;
}

/**
 * The message of an alert. `id` must be unique per message (the caller makes it, e.g. randomUUID).
 *
 * Example: an over-capacity start in zone "Reading tables" of camera "Reading room" with 12 people
 * and capacity 10 → text `Reading tables (Reading room): 12 people, more than its capacity of 10.`
 */
export function alertMessage(alert: Alert, site: string, id: string): AlertMessage {
  const f = alert.figures;
  const figures: Record<string, number | string | null> = { ...f };
  if ('lastFrameAt' in f) figures.lastFrameAt = f.lastFrameAt === null ? null : iso(f.lastFrameAt);
  return {
    format: 'residuum-alert/1',
    id,
    site,
    rule: alert.rule,
    phase: alert.phase,
    camera: alert.camera,
    cameraName: alert.cameraName,
    ...(alert.zone !== undefined && { zone: alert.zone, zoneName: alert.zoneName ?? alert.zone }),
    since: iso(alert.since),
    at: iso(alert.at),
    figures,
    text: alertText(alert),
    caution: ALERT_CAUTION,
  };
}

/** The plain sentence of an alert. */
export function alertText(alert: Alert): string {
  const f = alert.figures;
  const place = alert.zone !== undefined ? `${alert.zoneName ?? alert.zone} (${alert.cameraName})` : `Camera ${alert.cameraName}`;
  const lasted = `after ${duration(alert.at - alert.since)}`;
  if ('capacity' in f) {
    return alert.phase === 'started'
      ? `${place}: ${people(f.count)}, more than its capacity of ${f.capacity}.`
      : `${place} is back within its capacity of ${f.capacity} ${lasted} (at most ${people(f.peak)} meanwhile).`;
  }
  if ('lowStock' in f) {
    return alert.phase === 'started'
      ? `${place} is running low: ${percent(f.fill)} full, below its mark of ${percent(f.lowStock)}.`
      : `${place} is stocked again ${lasted} (lowest ${percent(f.lowest)} full meanwhile).`;
  }
  return alert.phase === 'started'
    ? `${place} is offline${f.reason ? ` (${f.reason})` : ''}: its zones are not being counted.`
    : `${place} is back online and counting ${lasted} offline.`;
}

/** Subject and plain-text body of the e-mail of a message. */
export function alertMail(message: AlertMessage): { subject: string; text: string } {
  const phase = message.phase === 'started' ? '' : 'Ended: ';
  const lines = [
    message.text,
    '',
    `Site: ${message.site}`,
    `Camera: ${message.cameraName} (${message.camera})`,
    ...(message.zone !== undefined ? [`Zone: ${message.zoneName} (${message.zone})`] : []),
    `Alert: ${message.rule}, ${message.phase}`,
    `Since: ${message.since}`,
    ...(message.phase === 'ended' ? [`Ended: ${message.at}`] : []),
    ...Object.entries(message.figures).map(([key, value]) => `${key}: ${value ?? '—'}`),
    '',
    message.caution,
    '',
    `Message id: ${message.id}`,
  ];
  return { subject: `${phase}${message.text}`.slice(0, 200), text: lines.join('\n') + '\n' };
}

function iso(ms: number): string {
  return new Date(ms).toISOString();
}

function people(n: number): string {
  return `${n} ${n === 1 ? 'person' : 'people'}`;
}

function percent(share: number): string {
  return `${Math.round(share * 100)} %`;
}

/** 45 s, 12 min, 3 h 05 min. */
function duration(ms: number): string {
  const s = Math.max(0, Math.round(ms / 1000));
  if (s < 60) return `${s} s`;
  const min = Math.round(s / 60);
  if (min < 60) return `${min} min`;
  return `${Math.floor(min / 60)} h ${String(min % 60).padStart(2, '0')} min`;
}
