import { SAMPLE_KIND_OF_ZONE, validateSample, type Sample, type SampleKind } from '../../store/index.ts';
import type { ZoneKind } from '../../domain/zone.ts';
import { MAX_EPOCH_MS } from '../../store/validate.ts';
import { SITE_ID_PATTERN } from './topics.ts';

/**
 * The JSON body of a sample message on `<prefix>/<site>/<camera>/<zone>/samples`: one stored
 * sample, exactly as the store holds it, so that a collector can store the same sample again.
 *
 * ```json
 * {"id":"door/entrance/1767261600000","site":"riverside","camera":"door","zone":"entrance",
 *  "time":1767261600000,"timeIso":"2026-01-01T10:00:00.000Z","intervalMs":10000,
 *  "kind":"count","value":2.5,"quality":0,"zoneKind":"room","zoneCreated":1767225600000,
 *  "seq":4711,"stream":"3f9c0a6b12d4e587"}
 * ```
 *
 * `time` is the end of the covered interval `[time − intervalMs, time)` in UTC epoch ms, `timeIso`
 * the same instant in ISO 8601; `id` = `${camera}/${zone}/${time}` is unique (a zone's intervals
 * never overlap). `zoneCreated` (epoch ms, optional) is when the zone was added at the source, so
 * that the collector's hourly export lists the same empty hours. Numbers travel as JSON numbers:
 * JavaScript prints the shortest text that reads back to the same double (ECMA-262
 * Number::toString), so values arrive bit for bit.
 */
export interface SampleMessage {
  readonly id: string;
  readonly site: string;
  readonly camera: string;
  readonly zone: string;
  readonly time: number;
  readonly timeIso: string;
  readonly intervalMs: number;
  readonly kind: SampleKind;
  readonly value: number;
  readonly quality: number;
  readonly zoneKind: ZoneKind;
  readonly zoneCreated?: number;
  /** The sample's sequence number at the site, per camera 1, 2, 3 … (see src/store/sequence.ts); absent for samples stored before numbering. */
  readonly seq?: number;
  /** Which site database numbered it: 16 hex digits made once per database, so that a collector notices a site starting over. */
  readonly stream?: string;
  /**
   * `[from, to]`: the site holds no sample of this stream numbered from..to (inclusive) any more
   * (pruned by its retention before a collector confirmed them); sent with the first sample after
   * such a hole, so that the collector does not wait for them.
   */
  readonly gap?: readonly [number, number];
}

/** A stream id: 16 lower-case hex digits. */
export const STREAM_PATTERN = /^[0-9a-f]{16}$/;

const ZONE_KIND_OF_SAMPLE: Record<SampleKind, ZoneKind> = { count: 'room', fill: 'shelf' };

export interface SampleMessageOptions {
  /** When the zone was created at the source, epoch ms; default not sent. */
  readonly zoneCreated?: number;
  /** Sequence number and stream of the sample; default not sent. */
  readonly seq?: number;
  readonly stream?: string;
  /** A hole in the site's numbers before this sample (see SampleMessage.gap); default none. */
  readonly gap?: readonly [number, number];
}

/** The message of one stored sample of `site`. Throws like the store for an invalid sample. */
export function sampleMessage(sample: Sample, site: string, options: SampleMessageOptions = {}): SampleMessage {
  const { zoneCreated, seq, stream, gap } = options;
  const s = validateSample(sample);
  return {
    id: `${s.camera}/${s.zone}/${s.time}`,
    site,
    camera: s.camera,
    zone: s.zone,
    time: s.time,
    timeIso: new Date(s.time).toISOString(),
    intervalMs: s.intervalMs,
    kind: s.kind,
    value: s.value,
    quality: s.quality,
    zoneKind: ZONE_KIND_OF_SAMPLE[s.kind],
    ...(zoneCreated !== undefined && { zoneCreated }),
    ...(seq !== undefined && stream !== undefined && { seq, stream, ...(gap && { gap }) }),
  };
}

/** Where a message came from (its topic levels). */
export interface SampleTopic {
  readonly site: string;
  readonly camera: string;
  readonly zone: string;
}

/**
 * Reads and checks a sample message received on the topic of `from`. Throws a TypeError or
 * RangeError whose message starts with the field: malformed JSON, a field of the wrong type or
 * range (the store's own checks), an `id` or `timeIso` that disagrees with `time`, a `zoneKind`
 * that disagrees with `kind`, or a body whose site, camera or zone is not the topic's.
 */
export function parseSampleMessage(from: SampleTopic, payload: Uint8Array | string): SampleMessage {
  let body: unknown;
  try {
    body = JSON.parse(typeof payload === 'string' ? payload : Buffer.from(payload).toString('utf8'));
  } catch (error) {
    throw new TypeError(`message: not JSON (${(error as Error).message})`);
  }
  if (typeof body !== 'object' || body === null || Array.isArray(body)) throw new TypeError('message: expected a JSON object');
  const m = body as Record<string, unknown>;
  const s = validateSample(
    { time: m.time, camera: m.camera, zone: m.zone, value: m.value, kind: m.kind, intervalMs: m.intervalMs, quality: m.quality } as Sample,
    'message',
  );
  if (typeof m.site !== 'string' || !SITE_ID_PATTERN.test(m.site)) throw new RangeError(`message.site: expected a site id, got ${JSON.stringify(m.site)}`);
  if (m.site !== from.site || s.camera !== from.camera || s.zone !== from.zone) {
    throw new RangeError(`message: site/camera/zone ${m.site}/${s.camera}/${s.zone} is not the topic's ${from.site}/${from.camera}/${from.zone}`);
  }
  if (m.id !== `${s.camera}/${s.zone}/${s.time}`) throw new RangeError(`message.id: expected "${s.camera}/${s.zone}/${s.time}", got ${JSON.stringify(m.id)}`);
  const timeIso = new Date(s.time).toISOString();
  if (m.timeIso !== timeIso) throw new RangeError(`message.timeIso: expected "${timeIso}" (message.time), got ${JSON.stringify(m.timeIso)}`);
  if (m.zoneKind !== ZONE_KIND_OF_SAMPLE[s.kind] || SAMPLE_KIND_OF_ZONE[m.zoneKind as ZoneKind] !== s.kind) {
    throw new RangeError(`message.zoneKind: a ${s.kind} sample comes from a ${ZONE_KIND_OF_SAMPLE[s.kind]} zone, got ${JSON.stringify(m.zoneKind)}`);
  }
  const zoneCreated = m.zoneCreated;
  if (zoneCreated !== undefined && !(typeof zoneCreated === 'number' && Number.isInteger(zoneCreated) && zoneCreated >= 0 && zoneCreated <= MAX_EPOCH_MS)) {
    throw new RangeError(`message.zoneCreated: expected an integer epoch time in ms, got ${JSON.stringify(zoneCreated)}`);
  }
  const { seq, stream } = m;
  if ((seq === undefined) !== (stream === undefined)) throw new RangeError(`message.${seq === undefined ? 'seq' : 'stream'}: seq and stream come together`);
  if (seq !== undefined && !(typeof seq === 'number' && Number.isSafeInteger(seq) && seq >= 1)) throw new RangeError(`message.seq: expected a whole number ≥ 1, got ${JSON.stringify(seq)}`);
  if (stream !== undefined && !(typeof stream === 'string' && STREAM_PATTERN.test(stream))) throw new RangeError(`message.stream: expected 16 hex digits, got ${JSON.stringify(stream)}`);
  const gap = m.gap;
  if (gap !== undefined) {
    const ok = Array.isArray(gap) && gap.length === 2 && gap.every((g) => Number.isSafeInteger(g) && g >= 1) && gap[0] <= gap[1] && seq !== undefined && gap[1] < (seq as number);
    if (!ok) throw new RangeError(`message.gap: expected [from, to], 1 ≤ from ≤ to < seq, got ${JSON.stringify(gap)}`);
  }
  return {
    id: m.id as string,
    site: m.site,
    camera: s.camera,
    zone: s.zone,
    time: s.time,
    timeIso,
    intervalMs: s.intervalMs,
    kind: s.kind,
    value: s.value,
    quality: s.quality,
    zoneKind: ZONE_KIND_OF_SAMPLE[s.kind],
    ...(zoneCreated !== undefined && { zoneCreated: zoneCreated as number }),
    ...(seq !== undefined && { seq: seq as number, stream: stream as string, ...(gap !== undefined && { gap: gap as [number, number] }) }),
  };
}
