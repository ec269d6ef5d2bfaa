import { STREAM_PATTERN } from './sampleMessage.ts';

/**
 * The collector's confirmation of one camera's samples, retained on `<prefix>/<site>/<camera>/ack`:
 * every sample of the camera's `stream` with a sequence number ≤ `seq` is stored in the central
 * database (committed), so the site may stop sending them again. `received` is the highest number
 * the collector has seen, so that `received − seq` is how far a gap holds it back.
 *
 * ```json
 * {"stream":"3f9c0a6b12d4e587","seq":4711,"received":4720,"time":"2026-03-02T09:00:00.000Z"}
 * ```
 */
export interface AckMessage {
  readonly stream: string;
  /** Everything up to this sequence number is stored; 0 when nothing contiguous from 1 is. */
  readonly seq: number;
  /** Highest sequence number received. */
  readonly received: number;
  /** When it was sent, ISO 8601 UTC. */
  readonly time: string;
}

/** Reads an ack message; throws naming the field. */
export function parseAckMessage(payload: Uint8Array | string): AckMessage {
  let m: Record<string, unknown>;
  try {
    m = JSON.parse(typeof payload === 'string' ? payload : Buffer.from(payload).toString('utf8')) as Record<string, unknown>;
  } catch (error) {
    throw new TypeError(`ack: not JSON (${(error as Error).message})`);
  }
  if (typeof m !== 'object' || m === null || Array.isArray(m)) throw new TypeError('ack: expected a JSON object');
  if (typeof m.stream !== 'string' || !STREAM_PATTERN.test(m.stream)) throw new RangeError(`ack.stream: expected 16 hex digits, got ${JSON.stringify(m.stream)}`);
  for (const key of ['seq', 'received'] as const) {
    const v = m[key];
    if (!(typeof v === 'number' && Number.isSafeInteger(v) && v >= 0)) throw new RangeError(`ack.${key}: expected a whole number ≥ 0, got ${JSON.stringify(v)}`);
  }
  return { stream: m.stream, seq: m.seq as number, received: m.received as number, time: typeof m.time === 'string' ? m.time : '' };
}
