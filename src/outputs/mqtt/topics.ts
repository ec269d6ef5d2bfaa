import { createHash } from 'node:crypto';
import { ID_PATTERN } from '../../store/index.ts';

/**
 * MQTT topics of Residuum. Levels after the configured prefix:
 *
 * ```
 * <prefix>/<site>/status                  retained  {"site","state":"online"|"offline","time"}  (the offline one is the will)
 * <prefix>/<site>/<camera>/<zone>/state   retained  the zone's current state (see zoneState.ts)
 * <prefix>/<site>/<camera>/<zone>/samples           every stored sample (see sampleMessage.ts), QoS ≥ 1
 * <prefix>/<site>/<camera>/events                   offline, online, view-changed, capacity-exceeded, …
 * <prefix>/<site>/<camera>/ack      retained  from the collector: {"stream","seq","time"}, everything up to seq is stored
 * ```
 *
 * Zone topics have four levels after the prefix and camera events three, so a zone called
 * `events` cannot be mistaken for the events topic.
 *
 * Sanitising: MQTT 3.1.1 §4.7 (recalled from memory) reserves `/` as the level separator and `+`,
 * `#` as wildcards of topic filters; they must never come from an id. Camera and zone ids are
 * already restricted to letters, digits, `-` and `_` (ID_PATTERN), for which {@link topicSegment}
 * is the identity; anything else is replaced by `_`.
 */

/** A site's topic level: 1..32 letters and digits, with single `-` or `_` between them (never `--`). */
export const SITE_ID_PATTERN = /^(?=.{1,32}$)[A-Za-z0-9]+(?:[-_][A-Za-z0-9]+)*$/;

/** Separator of site and camera in the collector's camera ids: `riverside--door`. */
export const SITE_SEPARATOR = '--';

/** One topic level from an id: characters other than letters, digits, `-`, `_` become `_`; empty becomes `_`. */
export function topicSegment(id: string): string {
  const s = String(id).replace(/[^A-Za-z0-9_-]/g, '_');
  return s === '' ? '_' : s;
}

/** `<prefix>/<site>/status` */
export function siteStatusTopic(prefix: string, site: string): string {
  return `${prefix}/${topicSegment(site)}/status`;
}

/** `<prefix>/<site>/<camera>/<zone>/state` */
export function stateTopic(prefix: string, site: string, camera: string, zone: string): string {
  return `${prefix}/${topicSegment(site)}/${topicSegment(camera)}/${topicSegment(zone)}/state`;
}

/** `<prefix>/<site>/<camera>/<zone>/samples` */
export function samplesTopic(prefix: string, site: string, camera: string, zone: string): string {
  return `${prefix}/${topicSegment(site)}/${topicSegment(camera)}/${topicSegment(zone)}/samples`;
}

/** `<prefix>/<site>/<camera>/events` */
export function eventsTopic(prefix: string, site: string, camera: string): string {
  return `${prefix}/${topicSegment(site)}/${topicSegment(camera)}/events`;
}

/** `<prefix>/<site>/<camera>/ack`: the collector's confirmation of a camera's samples (see ackMessage.ts). */
export function ackTopic(prefix: string, site: string, camera: string): string {
  return `${prefix}/${topicSegment(site)}/${topicSegment(camera)}/ack`;
}

/** The topic filters the collector subscribes to (every site and camera under the prefix). */
export function collectorFilters(prefix: string): { samples: string; state: string; events: string; status: string } {
  return { samples: `${prefix}/+/+/+/samples`, state: `${prefix}/+/+/+/state`, events: `${prefix}/+/+/events`, status: `${prefix}/+/status` };
}

/** A topic taken apart; `undefined` for a topic that is none of ours. */
export type ParsedTopic =
  | { readonly kind: 'samples' | 'state'; readonly site: string; readonly camera: string; readonly zone: string }
  | { readonly kind: 'events' | 'ack'; readonly site: string; readonly camera: string }
  | { readonly kind: 'status'; readonly site: string };

/** Takes a topic under `prefix` apart, by its number of levels and its last level. */
export function parseTopic(prefix: string, topic: string): ParsedTopic | undefined {
  if (!topic.startsWith(`${prefix}/`)) return undefined;
  const levels = topic.slice(prefix.length + 1).split('/');
  const last = levels[levels.length - 1];
  if (levels.length === 4 && (last === 'samples' || last === 'state')) return { kind: last, site: levels[0], camera: levels[1], zone: levels[2] };
  if (levels.length === 3 && (last === 'events' || last === 'ack')) return { kind: last, site: levels[0], camera: levels[1] };
  if (levels.length === 2 && last === 'status') return { kind: 'status', site: levels[0] };
  return undefined;
}

/**
 * A site's topic level from its display name: lower case, accents dropped, runs of other
 * characters turned into one `-`, at most 32 characters; `site` when nothing is left.
 *
 * Example: `siteSlug('Riverside branch library')` → `riverside-branch-library`.
 */
export function siteSlug(name: string): string {
  const s = name
    .normalize('NFKD')
    .replace(/[\u0300-\u036f]/g, '')
    .toLowerCase()
    .replace(/[^a-z0-9]+/g, '-')
    .slice(0, 32)
    .replace(/^-+|-+$/g, '');
  return s === '' ? 'site' : s;
}

/**
 * The collector's camera id for `camera` of `site`: `${site}--${camera}` (site ids never contain
 * `--`, so the first `--` separates them). When that is longer than the store's 64 characters,
 * the camera part is shortened and 8 hex digits of SHA-256(site, camera) are appended, so ids
 * stay valid (ID_PATTERN) and distinct.
 *
 * Example: `collectorCameraId('riverside', 'door')` → `riverside--door`.
 */
export function collectorCameraId(site: string, camera: string): string {
  if (!SITE_ID_PATTERN.test(site)) throw new RangeError(`site: expected 1..32 letters and digits with single "-" or "_" between them, got ${JSON.stringify(site)}`);
  if (!ID_PATTERN.test(camera)) throw new RangeError(`camera: expected 1..64 letters, digits, "-" or "_", got ${JSON.stringify(camera)}`);
  const id = `${site}${SITE_SEPARATOR}${camera}`;
  if (id.length <= 64) return id;
  const hash = createHash('sha256').update(`${site}\u0000${camera}`, 'utf8').digest('hex').slice(0, 8);
  const room = 64 - site.length - SITE_SEPARATOR.length - 1 - hash.length;
  return `${site}${SITE_SEPARATOR}${camera.slice(0, room)}-${hash}`;
}
